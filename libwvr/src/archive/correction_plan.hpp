#pragma once
// A night's per-antenna phase correction in the form both MeasurementSet outputs use (the
// corrected copy and the gain table). casacore-free and C++17-clean: included by the casacore
// side (see casacore_guard.hpp).

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

namespace wvr::archive {

// Antenna correction phases on a time grid, at the correction's observing frequency.
struct CorrectionPlan {
  std::vector<double> time_mjd_s;             // [time], increasing
  std::vector<double> phase_rad;              // [antenna, time]: add to the antenna's phase
  std::vector<std::uint8_t> usable;           // [antenna, time]
  std::function<double(double)> phase_scale;  // phase at freq_ghz / phase at obs_freq_ghz
  double obs_freq_ghz = 0.0;                  // frequency the phases refer to
  std::string site_description;               // the site whose dispersion phase_scale uses
  std::string night_epoch_utc;                // the night's time_epoch_utc (for messages)
  std::string history;                        // HISTORY MESSAGE of the output
};

}  // namespace wvr::archive
