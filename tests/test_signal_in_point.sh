#!/usr/bin/env bash
# A stop request inside one expensive point: `heraldry run` on points that take many seconds
# each (a fixed cutoff of 260 under a heralded step) gets SIGTERM (then, in a second run,
# SIGINT) a few seconds in; it must exit with code 130 within 3 s of the signal and leave its
# checkpoint, which a later run resumes. Then: the 0.6 m-dish grid of bench/, whose preflight
# once hung for minutes, finishes (with a generous bound) and reports every point.
#   tests/test_signal_in_point.sh HERALDRY_BINARY SOURCE_DIR SCRATCH_FOLDER     (CTest runs it)
set -euo pipefail
binary=${1:?usage: test_signal_in_point.sh HERALDRY_BINARY SOURCE_DIR SCRATCH_FOLDER}
source=${2:?}
scratch=${3:?}
failures=0
fail() { echo "FAIL: $*" >&2; failures=$((failures + 1)); }
rm -rf "$scratch"
mkdir -p "$scratch"
cat > "$scratch/slow.toml" <<'TOML'
# Invented scenario: a fixed, large cutoff on a short line, so that one point takes seconds.
title = "Signal test: slow points"

[source]
frequency_ghz = 6.0
squeezing_db = 8.0
thermal_photons = 0.01
bandwidth_mhz = 10.0

[link]
medium = "line"
geometry = "one-way"
distance_m = { from = 1.0, to = 4.0, points = 4 }
target_m = 2.0

[link.line]
loss_db_per_m = 0.05
temperature_k = 0.05

[counters.c]
kind = "threshold"
efficiency = 0.5
dark_per_gate = 1e-4

[[protocol]]
name = "two taps"
steps = ["link", { tap = "a", transmissivity = 0.9, counter = "c" }, { tap = "b", transmissivity = 0.9, counter = "c" }]

[numerics]
cutoff = 260
TOML

for sig in TERM INT; do
  out="$scratch/slow_$sig.h5"
  start=$(date +%s.%N)
  "$binary" run "$scratch/slow.toml" -o "$out" -t 1 --checkpoint-seconds 0.2 > "$scratch/run_$sig.log" 2>&1 &
  pid=$!
  sleep 4
  kill -s "$sig" "$pid"
  sent=$(date +%s.%N)
  status=0
  wait "$pid" || status=$?
  done_at=$(date +%s.%N)
  took=$(echo "$done_at - $sent" | bc)
  echo "SIG$sig: exit $status, $took s after the signal ($(echo "$sent - $start" | bc) s into the run)"
  [ "$status" = 130 ] || fail "SIG$sig: exit code $status, expected 130"
  (( $(echo "$took < 3.0" | bc) )) || fail "SIG$sig: took $took s to stop (expected < 3 s)"
  [ -e "$out.partial" ] || fail "SIG$sig: no checkpoint $out.partial"
  [ ! -e "$out" ] || fail "SIG$sig: a final file was written by an interrupted run"
done

# The grid that hung: 0.6 m dishes over 0.5-15 m, most of it separable.
status=0
timeout 300 "$binary" run "$source/bench/dish_0.6m.toml" -o "$scratch/dish.h5" --force -t 2 > "$scratch/dish.log" 2>&1 || status=$?
[ "$status" = 0 ] || fail "0.6 m dishes: exit code $status (expected 0: every point computed)"
grep -q "separable" "$scratch/dish.log" || fail "0.6 m dishes: the verdict does not say where the link becomes separable"

if [ "$failures" != 0 ]; then echo "$failures failure(s)"; exit 1; fi
echo "signals inside a point answered; the 0.6 m-dish grid finishes"
