#!/usr/bin/env bash
# Configures (once) and builds libwvr, its Python module, skyphase and the tests in ./build.
# Under CI (CI=true) warnings are errors.
set -euo pipefail
cd "$(dirname "$0")/.."
"$PWD/tools/install-deps.sh"
werror=OFF
[ "${CI:-}" = "true" ] && werror=ON
# ccache, where installed, makes rebuilds in several checkouts cheap; paths relative to the
# checkout keep its hits valid across them.
launcher=()
if command -v ccache > /dev/null; then
  export CCACHE_BASEDIR="$PWD"
  launcher=(-DCMAKE_CXX_COMPILER_LAUNCHER=ccache -DCMAKE_C_COMPILER_LAUNCHER=ccache)
fi
cmake -S . -B build "${launcher[@]}" -DCMAKE_BUILD_TYPE=Release -DPython3_EXECUTABLE=/usr/bin/python3 \
  -DWVR_WERROR="$werror" > build-configure.log 2>&1 || { cat build-configure.log; exit 1; }
rm -f build-configure.log
cmake --build build -j"$(nproc)"
