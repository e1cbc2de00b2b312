#pragma once
// Wind under frozen flow from the lags of the radiometer paths (see
// wvr/structure_function.hpp for the method).

#include <cstddef>
#include <string>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/diagnostic_status.hpp"
#include "wvr/night.hpp"

namespace wvr {

struct WindOptions {
  // Each series is high-passed by subtracting its running mean over this window (s), which
  // removes slow drifts (elevation, mean PWV) that would flatten the correlation peaks.
  double highpass_window_s = 120.0;
  double min_speed_m_s = 1.0;     // lag search up to |b| / min_speed_m_s ...
  double max_lag_s = 600.0;       // ... and never beyond this
  double min_correlation = 0.5;   // pairs whose peak correlation is lower are not used
  double min_baseline_m = 0.0;    // shorter pairs are not used
  double max_baseline_m = 1e300;  // longer pairs are not used
  // Series longer than this are searched first on block means (at most this many points),
  // then at full resolution around the coarse peak: the same lags as a full-resolution search
  // (StructureFunctionNight.LongNightsAreSearchedCoarseThenFine) at a fraction of the cost.
  std::size_t coarse_search_points = 4096;
  // Antenna pairs searched; beyond this many, an even subsample over baseline length (the
  // shortest and the longest kept) keeps the cost linear in antennas x samples. 2,016 is every
  // pair of 64 antennas.
  std::size_t max_pairs = 2016;
  int threads = 0;  // antenna pairs spread over threads (0 = all cores); results do not change

  void validate() const;  // throws InvalidInput
};

struct PairLag {
  int antenna_a = 0, antenna_b = 0;
  double baseline_east_m = 0.0, baseline_north_m = 0.0;  // position b - position a
  double lag_s = 0.0;                                    // L_b(t + lag) best matches L_a(t)
  double peak_correlation = 0.0;
  bool used = false;
};

struct WindEstimate {
  DiagnosticStatus status = DiagnosticStatus::kNoData;
  std::string message;
  double east_m_s = 0.0, north_m_s = 0.0;  // screen velocity (m/s)
  double speed_m_s = 0.0, speed_sigma_m_s = 0.0;
  // Direction the screen moves TOWARDS, degrees from north through east in [0, 360).
  double direction_to_deg = 0.0, direction_sigma_deg = 0.0;
  std::size_t pairs_used = 0;
  std::vector<PairLag> pairs;  // every pair examined

  bool ok() const { return status == DiagnosticStatus::kOk; }
  std::string brief_report() const;
};

// Frozen-flow velocity from the radiometer paths of every antenna pair. Throws InvalidInput
// for bad options or paths whose shape does not match the night's antennas.
WindEstimate estimate_wind(const Night& night,
                           const AntennaPaths& paths,
                           const WindOptions& options = {});

}  // namespace wvr
