#pragma once
// Retrieval: the atmospheric state that explains one radiometer's channel brightness.
//
// Maximum-likelihood fit (Ceres Solver, Levenberg-Marquardt, dense QR) of the fast sky model
// to the measured channel brightness T_c with Gaussian channel noise sigma_c:
//   r_c = (T_pred,c - T_c) / sigma_c,
//   T_pred,c = gain * (T_model,c(pwv, liquid) + dT * dT_model,c/dT) + offset_c,
// with free parameters PWV (always) and, by option, cloud liquid water path, an effective
// temperature offset of the profile (the model is linearised in it: |dT| of a few K changes
// brightness by < 0.05 K from curvature), per-channel calibration offsets or one common gain.
// Optional Gaussian priors enter as extra residuals (x - mean) / sigma; bounds keep PWV and
// liquid non-negative and inside the fast model's domain. The covariance is (J^T J)^-1 at the
// solution, scaled by nothing: it is the formal error for the given channel noise.
//
// Usage:
//   wvr::Retriever retriever(fast_model, options);       // one per thread
//   wvr::RetrievalResult r = retriever.fit({tb_k, noise_k, elevation_deg});
//   if (r.ok()) use(r.pwv_mm, r.pwv_sigma_mm);            // else r.message says why

#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "wvr/fast_sky_model.hpp"

namespace wvr {

struct GaussianPrior {
  double mean = 0.0;
  double sigma = 1.0;  // > 0
};

enum class CalibrationTerms {
  kNone,
  kChannelOffsets,  // one additive offset per channel (K); needs a prior when channels <= params
  kCommonGain,      // one multiplicative gain for all channels
};

struct RetrievalOptions {
  bool fit_liquid = false;
  bool fit_temperature_offset = false;
  CalibrationTerms calibration = CalibrationTerms::kNone;
  std::optional<GaussianPrior> pwv_prior_mm;
  std::optional<GaussianPrior> liquid_prior_kg_m2;
  std::optional<GaussianPrior> temperature_offset_prior_k;
  double channel_offset_prior_sigma_k = 1.0;  // prior N(0, sigma) on each offset
  double gain_prior_sigma = 0.05;             // prior N(1, sigma) on the gain
  double temperature_offset_limit_k = 15.0;   // bound |dT|
  int max_iterations = 50;

  // Throws InvalidInput naming the bad field.
  void validate() const;
};

struct RetrievalInput {
  std::span<const double> brightness_k;  // one value per channel
  std::span<const double> noise_k;       // rms noise per channel (> 0)
  double elevation_deg = 90.0;
  double initial_pwv_mm = -1.0;  // < 0: start from a coarse scan of the model
  // Known offset of this sample's profile temperature from the model's base profile (e.g. the
  // measured surface temperature minus the model's), applied through the model's linear
  // temperature term; a fitted offset adds to it.
  double temperature_offset_k = 0.0;
};

enum class RetrievalStatus {
  kConverged,
  kNoConvergence,  // iteration limit reached; estimates are the last iterate
  kInvalidInput,   // NaN brightness, non-positive noise, wrong channel count
  kOutOfDomain,    // elevation outside the model's domain
  kSolverFailure,
};

const char* to_string(RetrievalStatus status);

struct RetrievalResult {
  RetrievalStatus status = RetrievalStatus::kInvalidInput;
  std::string message;  // why, when not converged
  double pwv_mm = 0.0;
  double pwv_sigma_mm = 0.0;
  double liquid_kg_m2 = 0.0;
  double liquid_sigma_kg_m2 = 0.0;
  double temperature_offset_k = 0.0;
  double temperature_offset_sigma_k = 0.0;
  double gain = 1.0;
  std::vector<double> channel_offsets_k;  // empty unless fitted
  std::vector<std::string> parameter_names;
  std::vector<double> covariance;  // row-major, parameter_names.size()^2
  double chi2 = 0.0;               // of the channel residuals (priors excluded)
  int dof = 0;                     // channels + prior terms - free parameters
  double chi2_per_dof = 0.0;       // (chi2 + prior terms) / dof; NaN when dof <= 0
  int iterations = 0;
  std::vector<double> model_brightness_k;  // at the solution

  bool ok() const { return status == RetrievalStatus::kConverged; }
  // One line: status, PWV +/- sigma, extra parameters, chi2/dof, iterations.
  std::string brief_report() const;
};

class Retriever {
 public:
  // `model` must outlive the retriever. Throws InvalidInput for bad options.
  Retriever(const FastSkyModel& model, RetrievalOptions options = {});
  ~Retriever();
  Retriever(Retriever&&) noexcept;
  Retriever& operator=(Retriever&&) = delete;

  const RetrievalOptions& options() const { return options_; }

  // Never throws for bad data: problems come back as a status with a message.
  RetrievalResult fit(const RetrievalInput& input);

 private:
  struct Impl;
  const FastSkyModel* model_;
  RetrievalOptions options_;
  std::unique_ptr<Impl> impl_;
};

}  // namespace wvr
