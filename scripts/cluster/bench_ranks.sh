#!/usr/bin/env bash
# Parallel efficiency of MPI ranks: the same grid on 1 rank and on K ranks (default 2), one
# OpenMP thread each, wall-clock times and the efficiency T1 / (K T_K); the two files are also
# compared value for value. For reference, 1 rank with K OpenMP threads on the same cores: if
# the machine does not give K cores' worth of throughput (shared or virtual CPUs), neither
# figure reaches 1. Needs a build with -DHERALDRY_WITH_MPI=ON.
#   scripts/cluster/bench_ranks.sh [HERALDRY] [K] [REPEATS]
#   e.g. scripts/cluster/bench_ranks.sh build-mpi/heraldry 2 3   (best of 3 for each)
# Environment: MPIEXEC (default mpiexec), MPIEXEC_PREFLAGS (e.g. --oversubscribe), SCENARIO.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
heraldry=${1:-build-mpi/heraldry}
ranks=${2:-2}
repeats=${3:-1}
scenario=${SCENARIO:-$here/bench_grid.toml}
mpiexec=${MPIEXEC:-mpiexec}
export OMP_NUM_THREADS=1
work=$(mktemp -d "${TMPDIR:-/tmp}/heraldry_bench_ranks_XXXXXX")
trap 'rm -rf "$work"' EXIT

# Best wall-clock seconds of `repeats` runs on $1 ranks with $2 threads each.
best_of() {
  local n=$1 threads=$2 best="" t0 t1 t
  for ((i = 0; i < repeats; i++)); do
    rm -f "$work/r$n.h5"
    t0=$(date +%s.%N)
    # shellcheck disable=SC2086
    OMP_NUM_THREADS=$threads "$mpiexec" ${MPIEXEC_PREFLAGS:-} --bind-to none -n "$n" "$heraldry" run "$scenario" \
      -o "$work/r$n.h5" -t "$threads" >/dev/null 2>"$work/r$n.err"
    t1=$(date +%s.%N)
    t=$(awk -v a="$t0" -v b="$t1" 'BEGIN { print b - a }')
    if [ -z "$best" ] || awk -v t="$t" -v b="$best" 'BEGIN { exit !(t < b) }'; then best=$t; fi
  done
  echo "$best"
}

t1=$(best_of 1 1)
tk=$(best_of "$ranks" 1)
cp "$work/r$ranks.h5" "$work/ranks.h5"
verdict=$(sed -n 's/.*(verdict \([0-9.]*\) s).*/\1/p' "$work/r$ranks.err")
tt=$(best_of 1 "$ranks")
points=$(sed -n 's/.*run: \([0-9]*\) points.*/\1/p' "$work/r1.err")
/usr/bin/python3 "$here/../../tests/mpi/compare_h5.py" "$work/r1.h5" "$work/ranks.h5" >/dev/null \
  || { echo "bench_ranks: the $ranks-rank file differs from the 1-rank file" >&2; exit 1; }
printf "grid: %s points (%s), 1 thread per rank, best of %s\n" "$points" "$(basename "$scenario")" "$repeats"
printf "1 rank:  %8.2f s\n" "$t1"
printf "%d ranks: %8.2f s\n" "$ranks" "$tk"
printf "efficiency T1/(%d T%d): %.3f   (values identical)\n" "$ranks" "$ranks" "$(awk -v a="$t1" -v b="$tk" -v k="$ranks" 'BEGIN { print a / (k * b) }')"
printf "of which the verdict on rank 0 alone (serial): %s s\n" "$verdict"
printf "reference, 1 rank x %d threads: %8.2f s, efficiency %.3f\n" "$ranks" "$tt" "$(awk -v a="$t1" -v b="$tt" -v k="$ranks" 'BEGIN { print a / (k * b) }')"
