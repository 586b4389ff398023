#!/usr/bin/env bash
# Installs the built heraldry into a scratch prefix and builds and runs tests/install, a project
# outside heraldry that does find_package(heraldry) and links heraldry::core.
# Usage: run.sh BUILD_DIR SOURCE_DIR SCRATCH_DIR [LINK_FLAGS]
# LINK_FLAGS: for a sanitizer build (-fsanitize=...), whose installed library needs the runtime.
set -euo pipefail
build=$1 source=$2 scratch=$3 link_flags=${4:-}
rm -rf "$scratch"
mkdir -p "$scratch"
cmake --install "$build" --prefix "$scratch/prefix" > "$scratch/install.log"
cmake -S "$source/tests/install" -B "$scratch/consumer" -DCMAKE_PREFIX_PATH="$scratch/prefix" -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_EXE_LINKER_FLAGS="$link_flags" > "$scratch/configure.log"
cmake --build "$scratch/consumer" > "$scratch/build.log"
"$scratch/consumer/consumer"
