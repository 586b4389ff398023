#!/usr/bin/env bash
# Output safety under kill -9: at least 20 kills at random moments of `heraldry run` on a small
# scenario. After each kill: no result file is half-written (the final file, when present,
# opens and has the root attribute complete = 1; the checkpoint FILE.partial, when present,
# opens and has complete = 0); the same command then resumes, and the result finally equals an
# uninterrupted run dataset by dataset. Then: an output folder that cannot be created gives a
# clear message, exit code 2, no crash, before any work.
#   tests/test_kill_loop.sh HERALDRY_BINARY SCRATCH_FOLDER     (CTest runs it)
set -euo pipefail

binary=${1:?usage: test_kill_loop.sh HERALDRY_BINARY SCRATCH_FOLDER}
scratch=${2:?usage: test_kill_loop.sh HERALDRY_BINARY SCRATCH_FOLDER}
python=/usr/bin/python3
kills_wanted=${KILLS:-20}
failures=0
fail() { echo "FAIL: $*" >&2; failures=$((failures + 1)); }

rm -rf "$scratch"
mkdir -p "$scratch"
cat > "$scratch/small.toml" <<'TOML'
# Invented scenario: a short superconducting line between two refrigerators; one- and two-sided
# subtraction with a swept tap, enough points for many checkpoints.
title = "Kill loop: a short cryogenic line with swept subtraction taps"

[source]
frequency_ghz = 6.0
squeezing_db = 4.0
thermal_photons = 0.01
bandwidth_mhz = 10.0

[link]
medium = "line"
geometry = "one-way"
distance_m = { from = 5.0, to = 95.0, points = 10 }
target_m = 50.0

[link.line]
loss_db_per_m = 0.05
temperature_k = 0.05

[counters.lab]
kind = "threshold"
efficiency = 0.6
dark_per_gate = 1e-3

[[protocol]]
name = "bare"
steps = ["link"]

[[protocol]]
name = "subtract b"
steps = ["link", { tap = "b", transmissivity = { from = 0.80, to = 0.98, points = 4 }, counter = "lab" }]

[[protocol]]
name = "subtract both"
steps = ["link", { tap = "a", transmissivity = { from = 0.80, to = 0.98, points = 4 }, counter = "lab" },
         { tap = "b", transmissivity = 0.95, counter = "lab" }]

[numerics]
tolerance = 1e-6
TOML

# File checks in Python (h5py): prints "final ok", "partial ok" or a reason.
cat > "$scratch/check.py" <<'PY'
import sys, h5py
kind, path = sys.argv[1], sys.argv[2]
try:
    with h5py.File(path, "r") as f:
        complete = int(f.attrs["complete"])
        for group in ("axes", "link", "gaussian", "protocols"):
            f[group]
        for name in f["protocols"]:
            f["protocols"][name]["status"][...]
except Exception as e:
    print(f"{kind} {path} does not open: {e}"); sys.exit(1)
want = 1 if kind == "final" else 0
if complete != want:
    print(f"{kind} {path} has complete = {complete}, expected {want}"); sys.exit(1)
print(f"{kind} ok")
PY
cat > "$scratch/compare.py" <<'PY'
import sys, h5py, numpy as np
a, b = h5py.File(sys.argv[1], "r"), h5py.File(sys.argv[2], "r")
names = []
a.visititems(lambda n, o: names.append(n) if isinstance(o, h5py.Dataset) else None)
other = []
b.visititems(lambda n, o: other.append(n) if isinstance(o, h5py.Dataset) else None)
bad = sorted(set(names) ^ set(other))
for n in names:
    if n in b and not np.array_equal(a[n][...], b[n][...]):
        bad.append(n)
for k in ("complete", "scenario_hash", "cutoff_min", "cutoff_max"):
    if a.attrs[k] != b.attrs[k]: bad.append("@" + k)
verdict = lambda f: {g: dict(f[g].attrs) for g in ["verdict"] + ["verdict/" + k for k in f["verdict"]]}
if repr(verdict(a)) != repr(verdict(b)): bad.append("verdict attributes")
print("identical" if not bad else "differ: " + ", ".join(bad[:10]))
sys.exit(1 if bad else 0)
PY

run() { "$binary" run "$scratch/small.toml" --threads 1 --checkpoint-seconds 0 "$@"; }

# The reference: one uninterrupted run, timed.
start=$(date +%s.%N)
run -o "$scratch/reference.h5" > "$scratch/reference.log" 2>&1 || { cat "$scratch/reference.log" >&2; exit 1; }
duration=$(awk -v a="$start" -v b="$(date +%s.%N)" 'BEGIN { printf "%.3f", b - a }')
echo "kill loop: uninterrupted run takes ${duration} s"

out="$scratch/out.h5"
kills=0 completions=0 attempts=0
RANDOM=${KILL_SEED:-8191}
while (( kills < kills_wanted && attempts < 4 * kills_wanted )); do
  attempts=$((attempts + 1))
  # The binary itself in the background (not a function or subshell: kill -9 must hit it).
  "$binary" run "$scratch/small.toml" --threads 1 --checkpoint-seconds 0 -o "$out" > "$scratch/attempt.log" 2>&1 &
  pid=$!
  # A random moment in [0, 1.1 x the uninterrupted duration].
  delay=$(awk -v d="$duration" -v u="$RANDOM" 'BEGIN { printf "%.3f", d * 1.1 * u / 32767 }')
  sleep "$delay"
  if kill -9 "$pid" 2> /dev/null; then kills=$((kills + 1)); fi
  wait "$pid" 2> /dev/null || true
  if [[ -e "$out" ]]; then
    "$python" "$scratch/check.py" final "$out" > "$scratch/check.log" || fail "after kill $kills: $(cat "$scratch/check.log")"
  fi
  if [[ -e "$out.partial" ]]; then
    "$python" "$scratch/check.py" partial "$out.partial" > "$scratch/check.log" || fail "after kill $kills: $(cat "$scratch/check.log")"
  fi
  if [[ -e "$out" && ! -e "$out.partial" ]]; then
    # The run finished before the kill: it must equal the reference; start over.
    "$python" "$scratch/compare.py" "$scratch/reference.h5" "$out" > "$scratch/compare.log" \
      || fail "a completed run differs from the uninterrupted one: $(cat "$scratch/compare.log")"
    completions=$((completions + 1))
    rm -f "$out"
  fi
done
(( kills >= kills_wanted )) || fail "only $kills kills landed in $attempts attempts"

# Resume whatever the last kill left until the run completes.
for i in 1 2 3; do
  [[ -e "$out" && ! -e "$out.partial" ]] && break
  run -o "$out" > "$scratch/resume.log" 2>&1 || { cat "$scratch/resume.log" >&2; fail "the resuming run failed"; break; }
done
"$python" "$scratch/check.py" final "$out" > "$scratch/check.log" || fail "$(cat "$scratch/check.log")"
"$python" "$scratch/compare.py" "$scratch/reference.h5" "$out" > "$scratch/compare.log" \
  || fail "the resumed run differs from the uninterrupted one: $(cat "$scratch/compare.log")"
[[ ! -e "$out.partial" ]] || fail "the checkpoint is left behind after completion"
leftovers=$(find "$scratch" -name '*.tmp' | wc -l)
[[ $leftovers -eq 0 ]] || fail "$leftovers temporary files left behind: $(find "$scratch" -name '*.tmp')"

# An existing result is not overwritten without --force (exit 2, message names --force).
set +e
run -o "$out" > "$scratch/force.log" 2>&1; code=$?
set -e
[[ $code -eq 2 ]] && grep -q -- "--force" "$scratch/force.log" || fail "an existing result was not protected (exit $code)"

# An output folder that cannot be created (a file stands where the folder should be; root
# ignores permission bits, so a read-only folder would not fail): clear message, exit 2, no
# crash, nothing computed.
touch "$scratch/a_file"
set +e
run -o "$scratch/a_file/out.h5" > "$scratch/unwritable.log" 2>&1; code=$?
set -e
[[ $code -eq 2 ]] || fail "unwritable output: exit $code, expected 2"
grep -q "cannot create folder" "$scratch/unwritable.log" || fail "unwritable output: no clear message: $(cat "$scratch/unwritable.log")"
if grep -q "^heraldry run:" "$scratch/unwritable.log"; then fail "unwritable output: the run started before refusing"; fi

if (( failures )); then
  echo "$failures check(s) failed" >&2
  exit 1
fi
echo "kill loop: $kills kills survived in $attempts attempts ($completions runs completed before their kill); resumed result identical to the uninterrupted run; unwritable output refused"
