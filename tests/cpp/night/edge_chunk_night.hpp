#pragma once
// A small simulated night whose per-sample datasets end in a partial chunk, shared by the night
// file's chunk writer and reader tests.

#include "test_util.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace wvr {

// 5000 samples: per-sample datasets hold one whole chunk of 4096 samples and an edge chunk.
inline Night edge_chunk_night() {
  const Scenario scenario = parse_scenario(R"(
name = "chunk night"
seed = 11
duration_s = 5000.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 3
radius_m = 300.0
[observing]
calibrator_scan_s = 120.0
target_scan_s = 300.0
)",
                                           "chunks.toml", test::testdata(""));
  return simulate_night(scenario);
}

}  // namespace wvr
