#pragma once
// How a diagnostic computation (structure function, fit, wind) ended.

namespace wvr {

// How a diagnostic computation ended.
enum class DiagnosticStatus {
  kOk,
  kNoData,        // nothing usable: no scans, one antenna, all samples non-finite
  kTooFewPoints,  // fit only: too few points for the full model (a reduced model was fitted)
  kNoConvergence,
  kSolverFailure,
};
const char* to_string(DiagnosticStatus status);

}  // namespace wvr
