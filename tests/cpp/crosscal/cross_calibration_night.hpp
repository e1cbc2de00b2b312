#pragma once
// The cross-calibration tests' night without faults: two hours through transit (elevation up
// and down) with PWV drifting, 8 antennas within 200 m under a 100 um wet screen.

#include <string>

namespace wvr::test {

inline const std::string kCrossCalibrationNight = R"(
name = "cross-calibration night"
seed = 17
duration_s = 7200.0
integration_s = 2.0
site_file = "sites/demo-site.toml"
radiometer_file = "radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 8
radius_m = 200.0
[atmosphere]
pwv_mm = 1.0
pwv_drift_mm_per_hour = 0.3
[source]
declination_deg = -35.0
start_hour_angle_h = -1.0
[observing]
obs_freq_ghz = 230.0
[[turbulence]]
kind = "wet"
height_m = 500.0
thickness_m = 500.0
outer_scale_m = 4000.0
wind_east_m_s = 8.0
wind_north_m_s = 0.0
path_rms_um = 100.0
)";

}  // namespace wvr::test
