#!/usr/bin/env bash
# Interim demo of the foundation (fictional Farlight relay, Earth-Moon system): Lagrange points,
# the Hill region at the energy of a spacecraft passing L2 at 50 m/s, and a propagated arc.
set -euo pipefail
BIN=${BIN:-.venv/bin}
OUT=${1:-out}
mkdir -p "$OUT"
"$BIN/librate" points --system earth-moon
"$BIN/librate" zvc --system earth-moon --above L2 --dv 50m/s --plot "$OUT/hill-region-L2-50mps.png"
"$BIN/librate" propagate --system earth-moon --state 1.1809,0,-0.0556,0,-0.1577,0 --time 20d \
  --step 1h --plot "$OUT/trajectory.png" --format csv --out "$OUT/trajectory.csv"
echo "demo results are in $OUT/: hill-region-L2-50mps.png, trajectory.png, trajectory.csv"
