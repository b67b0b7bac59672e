#!/usr/bin/env bash
# One command on a fresh Debian 12 machine: install, build, and run the whole test suite
# (C++ through ctest, then Python through pytest on a freshly pip-installed package).
set -uo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh || exit 1
jobs=$(nproc 2>/dev/null || echo 2)

cmake -S . -B build/test -G Ninja -DCMAKE_BUILD_TYPE=Release -DLOTWISE_WERROR=ON || exit 1
cmake --build build/test -j "$jobs" || exit 1
ctest --test-dir build/test --output-on-failure -j "$jobs"
cpp_status=$?

.venv/bin/python -m pip install -q --force-reinstall --no-deps --no-build-isolation . || exit 1
.venv/bin/python -m pytest
py_status=$?

if [ "$cpp_status" -ne 0 ] || [ "$py_status" -ne 0 ]; then
  echo "lotwise: tests failed (ctest status $cpp_status, pytest status $py_status)"
  exit 1
fi
