#!/usr/bin/env bash
# Installs the Debian 12 packages libwvr needs that are not installed yet. Safe to re-run.
set -euo pipefail
packages=(
  build-essential cmake pkg-config clang-format
  libeigen3-dev libceres-dev libhdf5-dev zlib1g-dev libtomlplusplus-dev libcli11-dev nlohmann-json3-dev
  libgtest-dev libbenchmark-dev
  pybind11-dev python3-dev python3-numpy python3-pytest python3-h5py python3-matplotlib
  python3-distributed python3-tqdm python3-venv python3-setuptools python3-wheel python3-pip
  # MeasurementSets (optional component): casacore, its taql tools, python-casacore for the
  # tests' independent writer, and the leap-second table its measures need.
  casacore-dev casacore-tools python3-casacore casacore-data-tai-utc
  # Benchmarks: GNU time for the peak memory of a program alone (tools/bench/).
  time
  # Fuzzing (tools/fuzz.sh): clang and its libFuzzer runtime.
  clang-14 libfuzzer-14-dev
)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  exit 0
fi
echo "installing: ${missing[*]}"
sudo_cmd=()
[ "$(id -u)" -eq 0 ] || sudo_cmd=(sudo)
"${sudo_cmd[@]}" apt-get update -qq
DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
