#!/usr/bin/env bash
# Installs what is missing, builds, runs the main job on the built-in demo scenario
# (protocols/demo.toml) and draws its plots: data_out/demo.h5 and data_out/demo_*.png.
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/setup.sh
./scripts/build.sh --target heraldry
mkdir -p data_out
./build/heraldry link protocols/demo.toml
echo
./build/heraldry run --force
/usr/bin/python3 scripts/plot.py data_out/demo.h5
