#!/usr/bin/env bash
# One command on a fresh Debian 12 machine: install, build, and run the yield analysis of
# the demo design (a load-cell bridge amplifier with 1 % and with 0.1 % resistors).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
cmake -S . -B build/demo -G Ninja -DCMAKE_BUILD_TYPE=Release -DLOTWISE_BUILD_TESTS=OFF > /dev/null
cmake --build build/demo --target lotwise_cli
for design in docs/examples/load_cell_amp_1pct.toml docs/examples/load_cell_amp_01pct.toml; do
  echo
  ./build/demo/apps/lotwise run "$design" --report "build/demo/$(basename "$design" .toml).json"
done
