#!/usr/bin/env bash
# Installs everything lotwise needs on Debian 12 (as root, or with sudo): the compiler,
# CMake and the C++ libraries from Debian's packages, and a Python virtual environment
# in .venv with the Python packages from PyPI. Safe to run again.
set -euo pipefail
cd "$(dirname "$0")/.."

SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi

packages=(
  build-essential cmake ninja-build pkg-config
  python3 python3-dev python3-venv python3-pip
  libeigen3-dev libboost-dev catch2 nlohmann-json3-dev libcli11-dev libtomlplusplus-dev
  libbenchmark-dev
)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ "${#missing[@]}" -gt 0 ]; then
  echo "lotwise: installing Debian packages: ${missing[*]}"
  $SUDO apt-get update -q
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q --no-install-recommends "${missing[@]}"
fi

if [ ! -x .venv/bin/python ]; then
  echo "lotwise: creating the Python environment .venv"
  python3 -m venv .venv
fi
.venv/bin/python -m pip install -q --upgrade pip
.venv/bin/python -m pip install -q -r requirements-dev.txt
