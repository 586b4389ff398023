#!/usr/bin/env bash
# Installs the Debian 12 packages heraldry needs. Idempotent: only missing packages are installed.
# Usage: scripts/setup.sh [--mpi] [--fuzz]
set -euo pipefail

packages=(
  cmake g++ make
  libeigen3-dev          # dense and self-adjoint eigen-solvers
  libboost-dev           # Boost.Math: quadrature, root finding, minimisation
  libhdf5-dev            # HDF5 C++ API (serial)
  doctest-dev            # unit tests
  libtomlplusplus-dev    # scenario files
  libcli11-dev           # command line
  python3-h5py python3-matplotlib python3-numpy   # plots (scripts/plot.py)
  python3-mpmath         # reference-value generators (scripts/reference)
  pybind11-dev python3-dev python3-pybind11   # the Python module (python/)
  python3-pytest         # the Python module's tests
)
for arg in "$@"; do
  case "$arg" in
    --mpi) packages+=(libopenmpi-dev openmpi-bin) ;;
    --fuzz) packages+=(clang libclang-rt-14-dev) ;;
    *) echo "setup.sh: unknown option '$arg' (expected --mpi or --fuzz)" >&2; exit 2 ;;
  esac
done

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "setup.sh: all ${#packages[@]} packages already installed"
  exit 0
fi
echo "setup.sh: installing ${missing[*]}"
SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get -o DPkg::Lock::Timeout=600 update
$SUDO apt-get -o DPkg::Lock::Timeout=600 install -y --no-install-recommends "${missing[@]}"
