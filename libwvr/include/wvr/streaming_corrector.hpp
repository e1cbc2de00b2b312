#pragma once
// Real-time phase correction for correlator pipelines: one integration of every antenna's
// radiometer at a time.
//
// Each antenna has a linear path model valid for the current coefficient window (from the
// retrieval): the slant wet path
//   L_a = reference_path_mm_a + sum_c weight_mm_per_k_ac (T_ac - reference_brightness_k_ac)
// and the antenna phase correction (radians, to be added to the antenna's visibility phase)
//   phi_a = -(2 pi nu / c) * phase_per_path * scale_a * L_a,
// where phase_per_path = 1 + the dispersive fraction of wet refractivity at the observing
// frequency (wvr/dispersion.hpp) and scale_a the calibration scale (wvr/calibration.hpp).
//
// Real-time contract: configure once (allocates); process() is noexcept and allocates
// nothing; a dead, missing or implausible radiometer flags only its antenna (phase correction
// 0 for it). New coefficients can be published from another thread at any time with
// update_coefficients(); every process() call sees one complete coefficient set, never a mix.

#include <atomic>
#include <cstdint>
#include <span>
#include <vector>

namespace wvr {

// Coefficients of every antenna, flattened row-major.
struct CorrectorCoefficients {
  std::vector<double> weight_mm_per_k;         // [antenna, channel]
  std::vector<double> reference_brightness_k;  // [antenna, channel]
  std::vector<double> reference_path_mm;       // [antenna]
  std::vector<double> scale;                   // [antenna], 1 = no rescaling
  // Antennas without usable coefficients (e.g. their window fit failed): 1 = usable.
  std::vector<std::uint8_t> usable;  // [antenna]
};

struct CorrectorConfig {
  std::size_t antennas = 0;
  std::size_t channels = 0;
  double obs_freq_ghz = 230.0;
  double phase_per_path = 1.0;      // dispersion factor, see above
  double max_brightness_k = 400.0;  // above (or below 0, or NaN): the sample is implausible

  void validate() const;  // throws InvalidInput
};

enum CorrectorFlag : std::uint8_t {
  kCorrectorNoData = 1,          // the antenna's sample is marked invalid
  kCorrectorBadBrightness = 2,   // NaN or implausible brightness in a channel
  kCorrectorNoCoefficients = 4,  // the current coefficient set has no model for the antenna
};

enum class CorrectorStatus {
  kOk = 0,
  kBufferSizeMismatch,  // an input or output span has the wrong length; outputs untouched
};

class StreamingCorrector {
 public:
  // Validates (throws InvalidInput naming the field) and allocates everything.
  StreamingCorrector(const CorrectorConfig& config, const CorrectorCoefficients& initial);
  ~StreamingCorrector();
  StreamingCorrector(const StreamingCorrector&) = delete;
  StreamingCorrector& operator=(const StreamingCorrector&) = delete;

  const CorrectorConfig& config() const noexcept;

  // Publishes a new coefficient set. Safe to call from one thread while others call process();
  // validates first (throws InvalidInput, nothing published) and may wait briefly for
  // process() calls still using the set it is about to overwrite.
  void update_coefficients(const CorrectorCoefficients& coefficients);

  // One integration: brightness_k [antenna, channel], valid [antenna] (1 = usable). Writes
  // path_mm [antenna] (NaN when flagged), phase_correction_rad [antenna] (0 when flagged) and
  // flags [antenna] (0 = corrected).
  CorrectorStatus process(std::span<const double> brightness_k,
                          std::span<const std::uint8_t> valid,
                          std::span<double> path_mm,
                          std::span<double> phase_correction_rad,
                          std::span<std::uint8_t> flags) const noexcept;

 private:
  struct State;
  State* state_;
};

}  // namespace wvr
