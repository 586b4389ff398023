#!/usr/bin/env bash
# Sizes a Slurm job from `heraldry check`'s run-time estimate and prints the sbatch command.
#
#   scripts/cluster/size_job.sh SCENARIO.toml [RANKS] [THREADS] [RESULT.h5]
#
# RANKS (default 1) x THREADS (default 8) are the job's MPI ranks and OpenMP threads per rank
# (RANKS_PER_NODE, default 4, of the ranks share a node).
# The time limit is SAFETY (default 2) x the estimated wall time, plus the 5 minutes
# heraldry.slurm keeps for the checkpoint (--signal=TERM@300), rounded up to whole minutes. The
# estimate is calibrated on the machine that runs this script: run it on a node of the kind the
# job will use, or raise SAFETY when the login node is faster than the compute nodes.
set -euo pipefail
scenario=${1:?usage: size_job.sh SCENARIO.toml [RANKS] [THREADS] [RESULT.h5]}
ranks=${2:-1}
threads=${3:-8}
result=${4:-}
safety=${SAFETY:-2}
heraldry=${HERALDRY:-$(command -v heraldry || echo ./build/heraldry)}
here=$(dirname "$0")

report=$("$heraldry" check "$scenario")
line=$(printf '%s\n' "$report" | grep -E '^  estimate: [0-9]' || true)
if [ -z "$line" ]; then
  echo "size_job.sh: '$heraldry check' printed no estimate:" >&2
  printf '%s\n' "$report" | grep -E 'estimate' >&2 || true
  exit 1
fi
# "  estimate: C CPU-seconds (...) on one thread: sweep S s, verdict about V s;"
read -r sweep verdict < <(printf '%s\n' "$line" | sed -E 's/.*sweep ([0-9.e+-]+) s, verdict about ([0-9.e+-]+) s.*/\1 \2/')
points=$(printf '%s\n' "$report" | sed -nE 's/^  total: ([0-9]+) points$/\1/p')
read -r wall limit_s < <(awk -v s="$sweep" -v v="$verdict" -v k="$ranks" -v t="$threads" -v f="$safety" 'BEGIN {
  wall = s / (k * t) + v / t
  limit = f * wall + 300
  limit = 60 * int((limit + 59) / 60)
  printf "%.4g %d\n", wall, limit }')
hms=$(printf '%02d:%02d:00' $((limit_s / 3600)) $(((limit_s % 3600) / 60)))
per_thread=$(awk -v p="$points" -v k="$ranks" -v t="$threads" 'BEGIN { printf "%.0f", p / (k * t) }')

echo "$scenario: $points points; estimated wall time on $ranks x $threads: ${wall} s (sweep $sweep s, verdict about $verdict s CPU)"
if [ "$per_thread" -lt 30 ]; then
  echo "  note: $per_thread points per thread; fewer than ~30 balance poorly (scripts/cluster/README.md: sizing K and the threads)"
fi
# RANKS_PER_NODE (default 4, as in heraldry.slurm): ranks on one node, e.g. one per socket.
per_node=${RANKS_PER_NODE:-4}
[ "$ranks" -lt "$per_node" ] && per_node=$ranks
nodes=$(((ranks + per_node - 1) / per_node))
echo "sbatch --nodes=$nodes --ntasks-per-node=$per_node --cpus-per-task=$threads --time=$hms $here/heraldry.slurm $scenario${result:+ $result}"
