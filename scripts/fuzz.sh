#!/usr/bin/env bash
# Builds the scenario fuzz target with clang (libFuzzer + AddressSanitizer + UBSan) in
# build-fuzz/ and runs it for a bounded time, seeded with protocols/*.toml and
# tests/bad_scenarios/*.toml.
#   scripts/fuzz.sh [SECONDS]      default 120
# Prints the executions and the findings; crashing inputs are kept in build-fuzz/findings/
# (crash-*, leak-*, timeout-*, oom-*). Exit code 0: no finding; 1: a finding (or a build error).
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${1:-120}
[[ "$seconds" =~ ^[0-9]+$ ]] || { echo "fuzz.sh: SECONDS must be a whole number, got '$seconds'" >&2; exit 2; }
./scripts/setup.sh --fuzz
build=${FUZZ_BUILD_DIR:-build-fuzz}
mkdir -p "$build"
CC=clang CXX=clang++ cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DHERALDRY_FUZZ=ON \
  -DHERALDRY_BUILD_TESTS=OFF -DHERALDRY_WITH_OPENMP=OFF > "$build/configure.log" \
  || { cat "$build/configure.log" >&2; exit 1; }
cmake --build "$build" -j "${JOBS:-2}" --target fuzz_scenario

corpus="$build/corpus"      # grows across runs; the seeds are copied in every time
findings="$build/findings"
mkdir -p "$corpus" "$findings"
cp protocols/*.toml tests/bad_scenarios/*.toml "$corpus/"

# A TOML-aware dictionary helps the mutator reach the validator past the syntax checks.
dict="$build/scenario.dict"
{
  for k in title source frequency_ghz squeezing_db thermal_photons bandwidth_mhz link medium geometry \
           distance_m target_m antenna diameter_m aperture_efficiency interface_loss interface_temperature_k \
           air model temperature_c pressure_hpa water_vapour_gm3 rain_mm_per_h attenuation_db_per_km line \
           loss_db_per_m temperature_k direct transmissivity bath_photons counters kind efficiency dark_rate_hz \
           dark_per_gate gate_ns reset_us protocol name steps tap add amplify scissors loss counts squeezing gain \
           max_photons photon_source_efficiency loss_db numerics engine cutoff tolerance max_cutoff max_memory_mb \
           threads output file heralds_wanted from to points scale; do
    printf 'kw_%s="%s"\n' "$k" "$k"
  done
  printf 'p_eq=" = "\np_open="[["\np_close="]]"\np_brace="{ "\np_nan="nan"\np_inf="inf"\np_big="1e308"\np_neg="-0.0"\n'
} > "$dict"

log="$build/fuzz.log"
set +e
ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:halt_on_error=1} \
UBSAN_OPTIONS=${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1} \
  "$build/fuzz/fuzz_scenario" "$corpus" -dict="$dict" -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 \
  -max_len=4096 -artifact_prefix="$findings/" -print_final_stats=1 > "$log" 2>&1
rc=$?
set -e
execs=$(grep -o 'stat::number_of_executed_units: *[0-9]*' "$log" | grep -o '[0-9]*$' || echo "?")
new=$(find "$findings" -type f -newer "$dict" | sort)
echo "fuzz.sh: $execs executions in ${seconds} s (corpus: $(ls "$corpus" | wc -l) inputs)"
if [[ $rc -ne 0 || -n "$new" ]]; then
  echo "fuzz.sh: FINDING (exit $rc); last lines of $log:" >&2
  grep -E 'ERROR|SUMMARY|runtime error|deadly signal|Test unit written' "$log" | head -20 >&2
  [[ -n "$new" ]] && echo "inputs: $new" >&2
  exit 1
fi
echo "fuzz.sh: no findings"
