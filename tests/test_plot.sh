#!/usr/bin/env bash
# scripts/plot.py draws every figure of a small run.
#   tests/test_plot.sh HERALDRY_BINARY SCRATCH_FOLDER     (run from the source root; CTest does)
# Runs a tiny invented scenario (cryogenic line, 5 distances, one fixed and one swept tap), plots
# it, and checks that each expected figure is a non-empty PNG of the promised size; then checks
# that plot.py refuses a missing file and a file without the result layout with a non-zero exit.
set -euo pipefail

binary=${1:?usage: test_plot.sh HERALDRY_BINARY SCRATCH_FOLDER}
scratch=${2:?usage: test_plot.sh HERALDRY_BINARY SCRATCH_FOLDER}
python=/usr/bin/python3
plot=scripts/plot.py
failures=0

fail() { echo "FAIL: $*" >&2; failures=$((failures + 1)); }

rm -rf "$scratch"
mkdir -p "$scratch"

cat > "$scratch/tiny.toml" <<'EOF'
# Invented scenario: two refrigerators joined by a short superconducting line; subtraction on
# either end, the far-end tap swept.
title = "Plot check: a short cryogenic line with a fixed and a swept subtraction tap"

[source]
frequency_ghz = 6.0
squeezing_db = 3.0
thermal_photons = 0.01
bandwidth_mhz = 10.0

[link]
medium = "line"
geometry = "one-way"
distance_m = { from = 5.0, to = 45.0, points = 5 }
target_m = 30.0

[link.line]
loss_db_per_m = 0.05
temperature_k = 0.05

[counters.lab]
kind = "threshold"
efficiency = 0.6
dark_per_gate = 1e-3
gate_ns = 500.0
reset_us = 0.5

[[protocol]]
name = "subtract a"
steps = ["link", { tap = "a", transmissivity = 0.95, counter = "lab" }]

[[protocol]]
name = "subtract b, swept tap"
steps = ["link", { tap = "b", transmissivity = { from = 0.85, to = 0.97, points = 3 }, counter = "lab" }]

[numerics]
engine = "sector"
cutoff = "auto"
tolerance = 1e-6
EOF

"$binary" run "$scratch/tiny.toml" -o "$scratch/r.h5" --threads 1 > "$scratch/run.log" 2>&1 \
  || { cat "$scratch/run.log" >&2; echo "FAIL: heraldry run did not succeed" >&2; exit 1; }

"$python" "$plot" "$scratch/r.h5" > "$scratch/plot.log" 2>&1 \
  || { cat "$scratch/plot.log" >&2; echo "FAIL: plot.py did not succeed" >&2; exit 1; }

# The eight-byte PNG signature: W3C PNG Specification (2nd ed., ISO/IEC 15948), section 5.2.
# Width and height from the IHDR chunk (bytes 16-23, big-endian): the brief's 8 x 5 in at 120 dpi.
expected=(r_entanglement.png r_fidelity.png r_rates.png r_map_subtract-b-swept-tap.png)
for name in "${expected[@]}"; do
  file="$scratch/$name"
  if [[ ! -s "$file" ]]; then fail "$name was not written (or is empty)"; continue; fi
  magic=$(head -c 8 "$file" | od -An -tx1 | tr -d ' \n')
  [[ "$magic" == "89504e470d0a1a0a" ]] || fail "$name does not start with the PNG signature ($magic)"
  size=$("$python" -c 'import sys; h = open(sys.argv[1], "rb").read(24)
print(int.from_bytes(h[16:20], "big"), int.from_bytes(h[20:24], "big"))' "$file")
  [[ "$size" == "960 600" ]] || fail "$name is $size pixels, expected 960 600"
  grep -qF "$file" "$scratch/plot.log" || fail "plot.py did not print the path of $name"
done

# Only the protocol with a swept parameter gets a map.
maps=$(find "$scratch" -maxdepth 1 -name 'r_map_*.png' | wc -l)
[[ "$maps" -eq 1 ]] || fail "expected exactly one map, found $maps"

# --out writes into another folder (created if missing).
"$python" "$plot" "$scratch/r.h5" --out "$scratch/figures" > /dev/null 2>&1 \
  && [[ -s "$scratch/figures/r_rates.png" ]] || fail "--out did not write into the named folder"

# A missing file and a file without the layout: non-zero exit and a message naming the problem.
if "$python" "$plot" "$scratch/no_such_file.h5" > /dev/null 2> "$scratch/missing.err"; then
  fail "plot.py succeeded on a missing file"
fi
grep -q "no such file" "$scratch/missing.err" || fail "no clear message for a missing file"

"$python" -c 'import h5py, sys; h5py.File(sys.argv[1], "w").create_dataset("axes/distance_m", data=[1.0, 2.0])' \
  "$scratch/not_a_result.h5"
if "$python" "$plot" "$scratch/not_a_result.h5" > /dev/null 2> "$scratch/layout.err"; then
  fail "plot.py succeeded on a file without the result layout"
fi
grep -q "not a heraldry result file" "$scratch/layout.err" || fail "no clear message for a file without the layout"

if [[ $failures -ne 0 ]]; then
  echo "$failures check(s) failed" >&2
  exit 1
fi
echo "plot: all figures written as ${#expected[@]} PNGs of 960 x 600 pixels; bad inputs refused"
