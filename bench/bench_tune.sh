#!/usr/bin/env bash
# Benchmark of `heraldry tune` on three parameters (bench/tune_three_parameters.toml): the
# search as shipped (evaluations at the search tolerance, the grid on all threads, the optimum
# at the scenario's tolerance) against every evaluation at the scenario's tolerance on one
# thread (the search before). Prints the times, the evaluations and the ratio; not a test.
#   bench/bench_tune.sh [HERALDRY_BINARY]
set -euo pipefail
cd "$(dirname "$0")/.."
heraldry=${1:-./build/heraldry}
args=(tune bench/tune_three_parameters.toml --protocol "subtract both" --objective log-negativity --at 50)
timeit() { local t0 t1; t0=$(date +%s.%N); "$heraldry" "${args[@]}" "$@" > "$tmp/out.txt" 2> "$tmp/err.txt"; t1=$(date +%s.%N); echo "$t1 - $t0" | bc; }
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
slow=$(timeit --exact-search -t 1); slow_line=$(grep "^optimum" "$tmp/out.txt"); slow_n=$(grep -o "[0-9]* evaluations" "$tmp/out.txt")
fast=$(timeit); fast_line=$(grep "^optimum" "$tmp/out.txt"); fast_n=$(grep -o "[0-9]* evaluations" "$tmp/out.txt")
printf "exact search, 1 thread:  %6.2f s, %s, %s\n" "$slow" "$slow_n" "$slow_line"
printf "as shipped:              %6.2f s, %s, %s\n" "$fast" "$fast_n" "$fast_line"
printf "speed-up: %.1fx\n" "$(echo "$slow / $fast" | bc -l)"
