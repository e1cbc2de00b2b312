#pragma once
// Target scans have no calibrator phases: their phase-based verdict comes from the
// neighbouring calibrator scans, but only where the target scan's own radiometer evidence
// agrees with it.

#include <vector>

#include "wvr/diagnosis.hpp"

namespace wvr::detail {

// For every target window still "cannot judge" whose own radiometers were judged
// (`radiometer_judged[i]`: usable samples, no cloud, no array-wide fault), takes the verdict
// of the calibrator scan before it, or of the one after it when that one starts a problem.
// A neighbour's cloud is never inherited (the target scan's own radiometers saw none), nor a
// verdict that describes antennas rather than the sky (radiometer fault, cannot judge).
void inherit_target_verdicts(std::vector<WindowDiagnosis>& windows,
                             const std::vector<bool>& radiometer_judged);

}  // namespace wvr::detail
