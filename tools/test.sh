#!/usr/bin/env bash
# The README's second command: builds if needed and runs every test (C++ GoogleTest, Python
# pytest including the command line, the install-and-consume packaging check, the format check).
set -euo pipefail
cd "$(dirname "$0")/.."
tools/build.sh
ctest --test-dir build --output-on-failure -j"$(nproc)"
