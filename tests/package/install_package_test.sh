#!/usr/bin/env bash
# Package test: installs the build into a temporary prefix, builds examples/orbit_acceleration against the
# installed CMake package from a clean build directory, and a one-file program through pkg-config; checks that
# only public headers were installed and that the example's accelerations equal `polystokes field --set-frame`
# at the same points and, at twice the reference radius, are within 10% of the point-mass value GM/r^2
# (common practice: the degree-0 term dominates there).
# Usage: install_package_test.sh BUILD_DIR SOURCE_DIR
set -euo pipefail
build_dir="$(realpath "$1")"
source_dir="$(realpath "$2")"
work="$(mktemp -d /tmp/polystokes-package.XXXXXX)"
trap 'rm -rf "$work"' EXIT
fail() { echo "package test: $*"; exit 1; }

cmake --install "$build_dir" --prefix "$work/prefix" >/dev/null
prefix="$work/prefix"
[[ -f "$prefix/include/polystokes/io/coefficient_file.h" ]] || fail "public header io/coefficient_file.h not installed"
[[ -x "$prefix/bin/polystokes" ]] || fail "the CLI was not installed"
# Internal headers live in src/ and must not be installed.
while IFS= read -r header; do
  name="$(basename "$header")"
  if find "$prefix/include" -name "$name" | grep -q .; then fail "internal header $name was installed"; fi
done < <(find "$source_dir/src" -name '*.h')

cmake -S "$source_dir/examples/orbit_acceleration" -B "$work/example" -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_PREFIX_PATH="$prefix" >/dev/null
cmake --build "$work/example" -j2 >/dev/null

cd "$work"
"$prefix/bin/polystokes" -q compute "$source_dir/shapes-demo/brennow.obj" --unit km --density 2400 --degree 8 -o set.txt
"$work/example/orbit_acceleration" set.txt 8 >example.csv
cut -d, -f1-3 example.csv | sed '1s/.*/x_m,y_m,z_m/' >points.csv
"$prefix/bin/polystokes" -q field set.txt --set-frame --points points.csv -o field.csv
gm="$(awk '$1 == "gm_m3_s2" {print $3}' set.txt)"
[[ -n "$gm" ]] || fail "no gm line in the set"
paste -d, example.csv field.csv | awk -F, -v gm="$gm" '
  NR == 1 { next }
  { r2 = $1 * $1 + $2 * $2 + $3 * $3; a = sqrt($4 * $4 + $5 * $5 + $6 * $6)
    for (k = 0; k < 3; ++k) { d = $(4 + k) - $(11 + k); if (d < 0) d = -d
      if (d > 1e-12 * a) { printf "point %d: example %s, polystokes field %s\n", NR - 1, $(4 + k), $(11 + k); bad = 1 } }
    ratio = a * r2 / gm; if (ratio < 0.9 || ratio > 1.1) { printf "point %d: |a| r^2 / GM = %g\n", NR - 1, ratio; bad = 1 } }
  END { exit bad }' || fail "the example's accelerations disagree"

cat >pc.cpp <<'CPP'
#include <cstdio>
#include "polystokes/io/coefficient_file.h"
int main(int, char** argv) { std::printf("%d\n", polystokes::read_coefficient_file(argv[1]).degree); }
CPP
export PKG_CONFIG_PATH="$prefix/lib/pkgconfig:$prefix/lib/x86_64-linux-gnu/pkgconfig"
# shellcheck disable=SC2046
g++ -std=c++17 pc.cpp -o pc $(pkg-config --cflags --libs polystokes)
[[ "$(./pc set.txt)" == "8" ]] || fail "the pkg-config build read a wrong degree"
echo "package test: installed package, CMake consumer and pkg-config consumer all work"
