// Target scans inherit the verdict of neighbouring calibrator scans where their own evidence
// agrees (inheritance.hpp).

#include "diagnosis/inheritance.hpp"

#include <string>

namespace wvr::detail {
namespace {

const WindowDiagnosis* nearest_calibrator(const std::vector<WindowDiagnosis>& windows,
                                          std::size_t i,
                                          int step) {
  for (std::size_t j = i; step < 0 ? j-- > 0 : ++j < windows.size();) {
    if (windows[j].calibrator) return &windows[j];
  }
  return nullptr;
}

bool describes_the_sky(const WindowDiagnosis* w) {
  return w != nullptr && w->verdict != Verdict::kRadiometerFault &&
         w->verdict != Verdict::kCannotJudge && w->verdict != Verdict::kOutsideDomain;
}

bool is_problem(const WindowDiagnosis* w) {
  return w->verdict != Verdict::kCorrected && w->verdict != Verdict::kQuietSky;
}

}  // namespace

void inherit_target_verdicts(std::vector<WindowDiagnosis>& windows,
                             const std::vector<bool>& radiometer_judged) {
  for (std::size_t i = 0; i < windows.size(); ++i) {
    WindowDiagnosis& w = windows[i];
    if (w.calibrator || w.verdict != Verdict::kCannotJudge || !radiometer_judged[i]) continue;
    const WindowDiagnosis* before = nearest_calibrator(windows, i, -1);
    const WindowDiagnosis* after = nearest_calibrator(windows, i, +1);
    // This scan's radiometers saw no cloud: a neighbour's cloud does not reach into it.
    auto agrees = [](const WindowDiagnosis* n) {
      return describes_the_sky(n) && n->verdict != Verdict::kCloud;
    };
    const WindowDiagnosis* source = agrees(before) ? before : (agrees(after) ? after : nullptr);
    if (agrees(before) && agrees(after) && is_problem(after))
      source = after;  // a problem starting in the next calibrator scan covers this target scan
    if (source == nullptr) {
      if (describes_the_sky(before) || describes_the_sky(after))
        w.reason +=
            "; the neighbouring calibrator scans' cloud is not seen by this scan's "
            "radiometers";
      continue;
    }
    // Keep what the scan's own evidence said about antennas (after the first "; ").
    const std::size_t own = w.reason.find("; ");
    const std::string flagged = own != std::string::npos ? w.reason.substr(own) : std::string();
    w.verdict = source->verdict;
    w.inherited = true;
    w.reason = "inherited from the calibrator scan at " +
               std::to_string(static_cast<long>(source->start_s)) +
               " s; this scan's radiometers show no cloud" + flagged;
  }
}

}  // namespace wvr::detail
