#!/usr/bin/env bash
# Sets up polystokes and runs the main job on the bundled demo body Varnek: checks the shape, computes the
# exact constant-density Stokes coefficients to degree 16 and writes them to out/varnek.txt and out/varnek.json,
# then the surface environment of the body spinning with an invented period (out/varnek-surface.*) and the
# report with its surface maps (out/varnek.html).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh build
mkdir -p out
build/polystokes inspect shapes-demo/varnek.obj --unit km --density 1900
build/polystokes compute shapes-demo/varnek.obj --unit km --density 1900 --degree 16 --body Varnek \
  -o out/varnek.txt --json out/varnek.json
# The surface environment of Varnek with an invented spin period of 5.2 hours.
build/polystokes surface shapes-demo/varnek.obj --unit km --density 1900 --spin-period 5.2h \
  -o out/varnek-surface.ply -o out/varnek-surface.csv -o out/varnek-surface.json
# The report, with the surface maps of slope and dynamic height and the equilibrium points.
build/polystokes report out/varnek.txt --mesh shapes-demo/varnek.obj --spin-period 5.2h -o out/varnek.html
echo "demo: coefficient set written to out/varnek.txt (JSON: out/varnek.json); surface environment in" \
  "out/varnek-surface.{ply,csv,json}; report in out/varnek.html"
