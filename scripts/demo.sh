#!/usr/bin/env bash
# Installs what is missing, builds, and runs the main job on the built-in demo scenario.
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/setup.sh
./scripts/build.sh --target heraldry
mkdir -p data_out
./build/heraldry link protocols/demo.toml
