#!/usr/bin/env bash
# Sanitizer runs (run before landing a change to a reader, a writer or threaded code):
#   tools/sanitize.sh           AddressSanitizer + UndefinedBehaviorSanitizer: the whole C++
#                               suite, then every Python test that runs the skyphase program,
#                               against the sanitized skyphase. Build in ./build-asan.
#   tools/sanitize.sh thread    ThreadSanitizer: the C++ tests that run threads (retrieval,
#                               simulation, calibration, the chunk writer and reader, the night
#                               pipeline, the wind's pairs, the slab jackknife and the
#                               radiometer structure function's pairs). Build in ./build-tsan.
# Any report fails the run (halt_on_error); the Python module used by the command-line tests is
# the regular one in ./build (run tools/build.sh first).
set -euo pipefail
cd "$(dirname "$0")/.."
mode="${1:-address}"
"$PWD/tools/install-deps.sh"
launcher=()
if command -v ccache > /dev/null; then
  export CCACHE_BASEDIR="$PWD"
  launcher=(-DCMAKE_CXX_COMPILER_LAUNCHER=ccache -DCMAKE_C_COMPILER_LAUNCHER=ccache)
fi
configure() {  # build dir, sanitizers
  cmake -S . -B "$1" "${launcher[@]}" -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    -DPython3_EXECUTABLE=/usr/bin/python3 -DWVR_SANITIZE="$2" -DWVR_BUILD_PYTHON=OFF \
    -DWVR_BUILD_BENCHMARKS=OFF > "$1-configure.log" 2>&1 || { cat "$1-configure.log"; exit 1; }
  rm -f "$1-configure.log"
}

case "$mode" in
  address)
    configure build-asan address,undefined
    cmake --build build-asan -j"$(nproc)" --target wvr_tests skyphase
    export ASAN_OPTIONS=halt_on_error=1:detect_leaks=1:abort_on_error=1
    export UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1
    # The C++ suite in two shards, one per core.
    GTEST_TOTAL_SHARDS=2 GTEST_SHARD_INDEX=0 build-asan/tests/wvr_tests --gtest_brief=1 &
    shard0=$!
    GTEST_TOTAL_SHARDS=2 GTEST_SHARD_INDEX=1 build-asan/tests/wvr_tests --gtest_brief=1
    wait "$shard0"
    # Command-line tests: the regular Python module, the sanitized program.
    [ -d build/python/wvr ] || { echo "sanitize.sh: build/python is missing; run tools/build.sh first" >&2; exit 1; }
    # Left out: the byte-for-byte comparison of a night simulated by skyphase with one simulated
    # by the Python module, which holds only when both come from the same build (this skyphase
    # is RelWithDebInfo with sanitizers; floating-point results differ in the last bits).
    PYTHONPATH=build/python WVR_TESTDATA_DIR="$PWD/testdata" \
      WVR_SKYPHASE="$PWD/build-asan/tools/skyphase" \
      WVR_SKYPHASE_TESTS_ONLY=1 /usr/bin/python3 -m pytest -q -W error -p no:cacheprovider \
      --deselect tests/python/test_night.py::test_night_written_by_skyphase_equals_the_python_simulation \
      tests/python
    ;;
  thread)
    configure build-tsan thread
    cmake --build build-tsan -j"$(nproc)" --target wvr_tests
    export TSAN_OPTIONS=halt_on_error=1:second_deadlock_stack=1
    build-tsan/tests/wvr_tests --gtest_brief=1 \
      --gtest_filter='*Thread*:*Parallel*:*Streaming*:*NightRetrieval*:*Simulator*:*Calibration*:NightFileChunks.*:NightFileChunkReader.*:ChunkFilters.*:NightProcessing.*:StructureFunctionNight.WindPairs*:StructureFunctionNight.Jackknife*:StructureFunctionNight.RadiometerNoise*:RadiometerStructureWithout.*:AntennaPairs.*'
    ;;
  *)
    echo "usage: tools/sanitize.sh [address|thread]" >&2
    exit 2
    ;;
esac
