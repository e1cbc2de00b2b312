#pragma once
// A small simulated night (6 antennas, 15 minutes, 345 GHz) shared by the pipeline tests.

#include "test_util.hpp"
#include "wvr/scenario.hpp"
#include "wvr/simulator.hpp"

namespace wvr {

inline const Night& small_night() {
  static const Night night = [] {
    const std::string text = R"(
name = "pipeline test night"
seed = 5
duration_s = 900.0
integration_s = 1.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 6
radius_m = 800.0
[atmosphere]
pwv_mm = 1.0
[source]
declination_deg = -40.0
start_hour_angle_h = -1.0
[observing]
calibrator_scan_s = 90.0
target_scan_s = 60.0
obs_freq_ghz = 345.0
[[turbulence]]
kind = "wet"
height_m = 700.0
thickness_m = 800.0
outer_scale_m = 5000.0
wind_east_m_s = 9.0
wind_north_m_s = 2.0
path_rms_um = 300.0
)";
    return simulate_night(parse_scenario(text, "test.toml", test::testdata("")));
  }();
  return night;
}

}  // namespace wvr
