#!/usr/bin/env bash
# Runs one shipped scenario and checks that its result file contains every dataset and value of
# the committed reference (tests/regression/reference/NAME.h5) to 1e-12.
# Usage: run_one.sh HERALDRY_BINARY SOURCE_DIR NAME SCRATCH_DIR
set -euo pipefail
binary=$1 source=$2 name=$3 scratch=$4
mkdir -p "$scratch"
out="$scratch/$name.h5"
rm -f "$out" "$out.partial"
status=0
cd "$source"
"$binary" run "protocols/$name.toml" -o "$out" --force -t 1 > "$scratch/$name.verdict" 2> "$scratch/$name.log" || status=$?
# 3: some point missed its budget; the file is complete and is compared all the same.
if [ "$status" != 0 ] && [ "$status" != 3 ]; then
  echo "heraldry run failed with exit code $status:"; cat "$scratch/$name.log"; exit 1
fi
/usr/bin/python3 "$source/tests/regression/compare_results.py" "$source/tests/regression/reference/$name.h5" "$out"
