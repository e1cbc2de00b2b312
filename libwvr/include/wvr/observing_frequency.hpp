#pragma once
// The observing frequency a night's phase corrections are made for: one policy, no silent
// default.
//
//   1. a frequency the caller asks for (must be finite and positive);
//   2. otherwise the first scan's observing frequency (scans record the sky frequency);
//   3. otherwise the first calibrator phase row's frequency.
// A night with none of these is an error that says so.

#include <optional>

#include "wvr/night.hpp"

namespace wvr {

enum class FrequencySource { kRequested, kScans, kCalibratorRows };
const char* to_string(FrequencySource source);  // "requested", "scans", "calibrator rows"

struct ObservingFrequency {
  double freq_ghz = 0.0;
  FrequencySource source = FrequencySource::kRequested;
};

// Throws InvalidInput naming obs_freq_ghz and its value when a requested frequency is not
// finite and positive, and naming /scans/obs_freq_ghz when the night gives no frequency.
ObservingFrequency night_observing_frequency(const Night& night,
                                             std::optional<double> requested_ghz = std::nullopt);

}  // namespace wvr
