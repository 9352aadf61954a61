#!/usr/bin/env bash
# Fuzzes every polystokes reader with libFuzzer (clang, AddressSanitizer, UndefinedBehaviorSanitizer) for a
# fixed time per target. Not part of CI. Installs clang and its runtime libraries if missing.
# Usage: scripts/fuzz.sh [SECONDS_PER_TARGET (default 60)] [TARGET...]   (default: all targets)
# Environment: POLYSTOKES_FUZZ_BUILD (default build-fuzz), POLYSTOKES_FUZZ_JOBS (build jobs, default 2).
# Exit status 1 if any target found a crash, a hang, an out-of-memory or a sanitizer report; the inputs are
# kept in BUILD/artifacts/TARGET/ (add each, once fixed, to tests/data/fuzz-regressions/).
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${1:-60}"
shift || true
build_dir="${POLYSTOKES_FUZZ_BUILD:-build-fuzz}"
jobs="${POLYSTOKES_FUZZ_JOBS:-2}"

packages=(clang libclang-rt-14-dev)
missing=()
for package in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed" || missing+=("$package")
done
if ((${#missing[@]})); then
  echo "polystokes fuzz: installing ${missing[*]}"
  sudo_cmd=()
  [[ $(id -u) -ne 0 ]] && sudo_cmd=(sudo)
  "${sudo_cmd[@]}" apt-get update -q
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -q --no-install-recommends "${missing[@]}"
fi

cmake -S fuzz -B "$build_dir" -DCMAKE_CXX_COMPILER=clang++ >/dev/null
targets=("$@")
if ((${#targets[@]} == 0)); then
  mapfile -t targets < <(cmake --build "$build_dir" --target help | sed -n 's/^\.\.\. \(fuzz_[a-z_]*\)$/\1/p' | sort)
fi
cmake --build "$build_dir" -j"$jobs" --target "${targets[@]}"

status=0
for target in "${targets[@]}"; do
  seeds="fuzz/seeds/${target#fuzz_}"
  corpus="$build_dir/corpus/$target"
  artifacts="$build_dir/artifacts/$target"
  mkdir -p "$corpus" "$artifacts"
  dict=()
  [[ -f "fuzz/dict/${target#fuzz_}.dict" ]] && dict=(-dict="fuzz/dict/${target#fuzz_}.dict")
  echo "polystokes fuzz: $target for ${seconds} s"
  log="$build_dir/$target.log"
  # -timeout: one input taking > 10 s is a hang; -rss_limit_mb / -malloc_limit_mb: refusing huge
  # allocations is the readers' job, so an input that makes them allocate > 2 GB is a finding too.
  if "$build_dir/$target" "$corpus" "$seeds" "${dict[@]}" -max_total_time="$seconds" -timeout=10 \
      -rss_limit_mb=2048 -malloc_limit_mb=2048 -max_len=65536 -print_final_stats=1 \
      -artifact_prefix="$artifacts/" >"$log" 2>&1; then
    echo "  ok: $(grep -E '^stat::number_of_executed_units' "$log" | awk '{print $2}') executions, no findings"
  else
    status=1
    echo "  FINDING: see $log and $artifacts/"
    grep -E 'ERROR: (AddressSanitizer|libFuzzer|UndefinedBehaviorSanitizer)|runtime error|SUMMARY' "$log" | head -5 | sed 's/^/    /'
  fi
done
exit "$status"
