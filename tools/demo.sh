#!/usr/bin/env bash
# The README's first command: installs what is missing, builds, and runs the main job on the
# bundled demo: the channel model of the demo 183 GHz radiometer at the demo site, then a
# simulated 2-hour night of the demo array through the whole chain
# (simulate -> inspect -> retrieve -> calibrate -> correct) with a before/after summary, and
# the night report (out/demo-report/index.html).
set -euo pipefail
cd "$(dirname "$0")/.."
tools/build.sh > build.log 2>&1 || { tail -n 40 build.log; exit 1; }
build/tools/skyphase channels \
  --site testdata/sites/demo-site.toml \
  --radiometer testdata/radiometers/demo-183-dsb.toml \
  --pwv-mm 0.5,1,2,4 --elevation-deg 30,60,90
mkdir -p out
echo
build/tools/skyphase simulate testdata/demo-scenario.toml -o out/demo-night.h5 --overwrite
echo
build/tools/skyphase inspect out/demo-night.h5
echo
build/tools/skyphase retrieve out/demo-night.h5 -o out/demo-retrieved.h5 --overwrite
echo
build/tools/skyphase calibrate out/demo-retrieved.h5 -o out/demo-calibrated.h5 --overwrite
echo
build/tools/skyphase correct out/demo-calibrated.h5 -o out/demo-corrected.h5 --overwrite
echo
build/tools/skyphase report out/demo-night.h5 -o out/demo-report
echo
# MeasurementSet round trip (when built with casacore): the first 20 minutes of the demo night
# written as an MS by python-casacore, imported, processed, and exported with CORRECTED_DATA and
# as an antenna-based gain table.
if build/tools/skyphase import --help > /dev/null 2>&1; then
  rm -rf out/demo.ms out/demo-corrected.ms out/demo.gains
  /usr/bin/python3 tests/python/ms_writer.py out/demo-night.h5 out/demo.ms 1200
  build/tools/skyphase import out/demo.ms -o out/demo-ms-night.h5 --brightness rayleigh-jeans --overwrite
  build/tools/skyphase correct out/demo-ms-night.h5 -o out/demo-ms-corrected.h5 --overwrite
  build/tools/skyphase export out/demo-ms-corrected.h5 --ms out/demo.ms -o out/demo-corrected.ms \
    --gain-table out/demo.gains
  taql "select gcount() as rows, gntrue(FLAG_ROW) as flagged from out/demo-corrected.ms where ANTENNA1 != ANTENNA2"
  taql "select gcount() as solutions, gntrue(any(FLAG)) as flagged from out/demo.gains"
fi
