#!/usr/bin/env bash
# scripts/plot.py draws every figure of a small run, overlays two runs, and draws separable points
# as results.
#   tests/test_plot.sh HERALDRY_BINARY SCRATCH_FOLDER     (run from the source root; CTest does)
# 1. Runs a tiny invented scenario (cryogenic line, 5 distances, one fixed and one swept tap),
#    plots it, and checks that each expected figure is a non-empty PNG of the promised size.
# 2. Runs a second invented scenario (more squeezing, an extra protocol that sorts first, so the
#    protocols sit at other places in the file) and overlays the two: `plot.py r.h5 r2.h5`.
# 3. Writes a small synthetic result file (h5py, the layout of src/io/hdf5_output.cpp, invented
#    numbers labelled as synthetic test data) with separable points (status 5) beyond a bare-link
#    crossing and one failure of each kind (status 1, 2, 4), and plots it.
# 4. Imports plot.py and checks what was drawn: the same colour for the same protocol in both
#    files, separable points drawn as values (E_N = 0), failures as markers and never as values,
#    the separability line and its words, the E_N-versus-PLOB note, colour bars with at least three
#    ticks, map cells with edges half-way between non-uniform grid values.
# 5. Checks that plot.py refuses a missing file and a file without the result layout.
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

# 2. A second run, and the two overlaid on one set of axes.
sed -e 's/squeezing_db = 3.0/squeezing_db = 4.0/' \
    -e 's/^title = .*/title = "Plot check: the same line with more squeezing and an amplifier"/' \
    "$scratch/tiny.toml" > "$scratch/tiny2.toml"
cat >> "$scratch/tiny2.toml" <<'EOF'

[[protocol]]
name = "amplify b"
steps = ["link", { amplify = "b", gain = 1.2, max_photons = 3 }]
EOF
"$binary" run "$scratch/tiny2.toml" -o "$scratch/r2.h5" --threads 1 > "$scratch/run2.log" 2>&1 \
  || { cat "$scratch/run2.log" >&2; echo "FAIL: heraldry run of the second scenario did not succeed" >&2; exit 1; }
"$python" "$plot" "$scratch/r.h5" "$scratch/r2.h5" --out "$scratch/overlay" > "$scratch/overlay.log" 2>&1 \
  || { cat "$scratch/overlay.log" >&2; echo "FAIL: plot.py did not overlay two files" >&2; exit 1; }
for name in r_vs_r2_entanglement.png r_vs_r2_fidelity.png r_vs_r2_rates.png r_map_subtract-b-swept-tap.png \
            r2_map_subtract-b-swept-tap.png; do
  [[ -s "$scratch/overlay/$name" ]] || fail "overlay: $name was not written"
  grep -qF "$scratch/overlay/$name" "$scratch/overlay.log" || fail "overlay: plot.py did not print the path of $name"
done

# 3. Synthetic test data (tests/plot/synthetic_result.py): separable points, failures of each kind.
"$python" tests/plot/synthetic_result.py "$scratch/separable.h5"
"$python" "$plot" "$scratch/separable.h5" > "$scratch/separable.log" 2>&1 \
  || { cat "$scratch/separable.log" >&2; echo "FAIL: plot.py did not draw the synthetic separable file" >&2; exit 1; }
for name in separable_entanglement.png separable_fidelity.png separable_rates.png \
            separable_map_subtract-both.png separable_map_subtract-a.png; do
  [[ -s "$scratch/$name" ]] || fail "separable: $name was not written"
done

# 4. What was drawn, read back from the figures (tests/plot/check_plots.py).
"$python" tests/plot/check_plots.py "$scratch" "$plot" > "$scratch/checks.log" 2>&1 \
  || { cat "$scratch/checks.log" >&2; fail "the figures do not show what they should (lines above)"; }

# 5. --out writes into another folder (created if missing).
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
echo "plot: all figures written as ${#expected[@]} PNGs of 960 x 600 pixels; two runs overlaid with one colour" \
     "per protocol; separable points drawn as results, failures as markers; bad inputs refused"
