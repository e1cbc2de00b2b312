#pragma once
// The per-antenna arithmetic of StreamingCorrector::process(), shared with offline
// reprocessing so both give bit-identical numbers. Defined out of line in
// streaming_corrector.cpp: there is exactly one compiled copy of the arithmetic, so every
// caller gets the same operation order and the same contraction decisions.

#include <cstddef>
#include <cstdint>
#include <span>

namespace wvr::detail {

// One antenna's linear path model from a coefficient set.
struct AntennaPathModel {
  std::span<const double> weight_mm_per_k;         // [channel]
  std::span<const double> reference_brightness_k;  // [channel]
  double reference_path_mm = 0.0;
  double scale = 1.0;
  bool usable = false;
};

struct AntennaCorrection {
  double path_mm;               // NaN when flagged
  double phase_correction_rad;  // 0 when flagged
  std::uint8_t flags;           // CorrectorFlag bits, 0 = corrected
};

// -(2 pi f / c) * phase_per_path / (1000 mm/m): phase per millimetre of path, including the
// sign of the correction. f = obs_freq_ghz * 1e9 Hz, c = constants::speed_of_light_m_per_s.
double corrector_phase_rad_per_mm(double obs_freq_ghz, double phase_per_path) noexcept;

// Corrects one antenna's sample. brightness_k, model.weight_mm_per_k and
// model.reference_brightness_k must all have the same length (the channel count); the
// caller guarantees it. Order of operations (fixed, so results are reproducible):
//   sum = 0; for c in 0..C-1: sum += weight[c] * (T[c] - T_ref[c])
//   path_mm = reference_path_mm + sum
//   phase_correction_rad = (phase_rad_per_mm * scale) * path_mm
// Flags: !valid -> kCorrectorNoData (the brightness is then not inspected); otherwise any
// channel NaN, < 0 or > max_brightness_k -> kCorrectorBadBrightness; !model.usable ->
// kCorrectorNoCoefficients (reported together with the other bits).
AntennaCorrection correct_antenna(std::span<const double> brightness_k,
                                  bool valid,
                                  const AntennaPathModel& model,
                                  double max_brightness_k,
                                  double phase_rad_per_mm) noexcept;

}  // namespace wvr::detail
