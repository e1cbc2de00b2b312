#include "wvr/observing_frequency.hpp"

#include <cmath>

#include "wvr/error.hpp"

namespace wvr {

const char* to_string(FrequencySource source) {
  switch (source) {
    case FrequencySource::kRequested:
      return "requested";
    case FrequencySource::kScans:
      return "scans";
    case FrequencySource::kCalibratorRows:
      return "calibrator rows";
  }
  return "unknown";
}

ObservingFrequency night_observing_frequency(const Night& night,
                                             std::optional<double> requested_ghz) {
  if (requested_ghz) {
    if (!std::isfinite(*requested_ghz) || *requested_ghz <= 0.0) {
      throw InvalidInput(describe_value("obs_freq_ghz", *requested_ghz) +
                         " is not a positive frequency (GHz)");
    }
    return {*requested_ghz, FrequencySource::kRequested};
  }
  for (const Scan& scan : night.scans) {
    if (std::isfinite(scan.obs_freq_ghz) && scan.obs_freq_ghz > 0.0)
      return {scan.obs_freq_ghz, FrequencySource::kScans};
  }
  for (double f : night.calibrator_phases.freq_ghz) {
    if (std::isfinite(f) && f > 0.0) return {f, FrequencySource::kCalibratorRows};
  }
  throw InvalidInput(
      "the night gives no observing frequency (/scans/obs_freq_ghz and "
      "/calibrator_phases/freq_ghz hold none); give one (obs_freq_ghz, --obs-freq-ghz)");
}

}  // namespace wvr
