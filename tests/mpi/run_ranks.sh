#!/usr/bin/env bash
# MPI end-to-end checks (CTest label "mpi"): a run split over ranks must equal a single-process
# run value for value; each point is independent and deterministic, so no tolerance applies.
#   run_ranks.sh equal   HERALDRY MPIEXEC NUMPROC_FLAG [K]   K ranks == one process
#   run_ranks.sh resume  HERALDRY MPIEXEC NUMPROC_FLAG [K]   K ranks stopped midway, resumed == one process
#   run_ranks.sh error   HERALDRY MPIEXEC NUMPROC_FLAG [K]   an error while evaluating: exit 2, one message, no hang
# K defaults to 2. MPIEXEC_PREFLAGS (environment, optional) go before the rank count, e.g.
# --oversubscribe.
set -euo pipefail
mode=$1 heraldry=$2 mpiexec=$3 np_flag=$4 k=${5:-2}
here=$(cd "$(dirname "$0")" && pwd)
scenario="$here/small_grid.toml"
work=$(mktemp -d "${TMPDIR:-/tmp}/heraldry_mpi_${mode}_XXXXXX")
trap 'rm -rf "$work"' EXIT
export OMP_NUM_THREADS=${OMP_NUM_THREADS:-1}
# shellcheck disable=SC2086
ranks() { local n=$1; shift; "$mpiexec" ${MPIEXEC_PREFLAGS:-} "$np_flag" "$n" "$heraldry" "$@"; }
compare() { /usr/bin/python3 "$here/compare_h5.py" "$1" "$2"; }
fail() { echo "FAIL: $*" >&2; exit 1; }

case "$mode" in
  equal)
    "$heraldry" run "$scenario" -o "$work/one.h5" -t 1 >/dev/null
    ranks "$k" run "$scenario" -o "$work/two.h5" -t 1 >"$work/two.txt" 2>"$work/two.err"
    grep -q "on $k ranks" "$work/two.err" || fail "the run did not use $k ranks: $(cat "$work/two.err")"
    [ "$(/usr/bin/python3 -c 'import h5py,sys; print(h5py.File(sys.argv[1],"r").attrs["ranks"])' "$work/two.h5")" = "$k" ] \
      || fail "the file does not record $k ranks"
    compare "$work/one.h5" "$work/two.h5"
    # The verdict printed on the terminal is the same too.
    "$heraldry" run "$scenario" -o "$work/one_again.h5" -t 1 >"$work/one.txt" 2>/dev/null
    diff "$work/one.txt" "$work/two.txt" || fail "the verdicts differ"
    ;;
  resume)
    "$heraldry" run "$scenario" -o "$work/full.h5" -t 1 >/dev/null
    rc=0
    ranks "$k" run "$scenario" -o "$work/part.h5" -t 1 --stop-after 5 >/dev/null 2>"$work/first.err" || rc=$?
    [ "$rc" = 130 ] || fail "the stopped run exited with $rc, expected 130: $(cat "$work/first.err")"
    [ -f "$work/part.h5.partial" ] || fail "no checkpoint after the stop"
    [ ! -e "$work/part.h5" ] || fail "a complete result after the stop"
    done_first=$(sed -n 's/.*stopped after \([0-9]*\) new points.*/\1/p' "$work/first.err")
    [ -n "$done_first" ] && [ "$done_first" -ge 5 ] && [ "$done_first" -lt 32 ] \
      || fail "the stop did not happen midway: $(cat "$work/first.err")"
    ranks "$k" run "$scenario" -o "$work/part.h5" -t 1 >/dev/null 2>"$work/second.err"
    grep -q "32 points ($done_first resumed)" "$work/second.err" \
      || fail "the resumed run did not take the $done_first checkpointed points: $(cat "$work/second.err")"
    [ ! -e "$work/part.h5.partial" ] || fail "the checkpoint is left after the resumed run completed"
    compare "$work/full.h5" "$work/part.h5"
    ;;
  error)
    # A fixed cutoff whose state exceeds the memory allowed: every rank refuses it before any
    # work (cmd_run's preflight), and only rank 0 prints the reason.
    sed -e 's/^tolerance = 1e-7$/cutoff = 300\nmax_memory_mb = 1/' "$scenario" >"$work/too_big.toml"
    rc=0
    # shellcheck disable=SC2086
    timeout 120 "$mpiexec" ${MPIEXEC_PREFLAGS:-} "$np_flag" "$k" "$heraldry" run "$work/too_big.toml" -o "$work/e.h5" -t 1 \
      >/dev/null 2>"$work/e.err" || rc=$?
    [ "$rc" = 2 ] || fail "exit code $rc, expected 2 (bad input): $(cat "$work/e.err")"
    [ "$(grep -c '^heraldry: error: .*numerics.max_memory_mb' "$work/e.err")" = 1 ] \
      || fail "expected one error message naming numerics.max_memory_mb: $(cat "$work/e.err")"
    ;;
  *) echo "run_ranks.sh: unknown mode '$mode'" >&2; exit 2 ;;
esac
echo "ok: $mode"
