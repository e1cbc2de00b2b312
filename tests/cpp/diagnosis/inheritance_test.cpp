// Target scans inherit a neighbour's verdict only where their own evidence agrees.
#include "diagnosis/inheritance.hpp"

#include <gtest/gtest.h>

namespace wvr {
namespace {

WindowDiagnosis window(double start_s, bool calibrator, Verdict verdict) {
  WindowDiagnosis w;
  w.start_s = start_s;
  w.stop_s = start_s + 100.0;
  w.calibrator = calibrator;
  w.verdict = verdict;
  w.reason = calibrator ? "phases" : "target scan: no calibrator phases";
  return w;
}

TEST(Inheritance, ATargetScanBeforeACloudKeepsTheSkyItsRadiometersSee) {
  std::vector<WindowDiagnosis> windows = {window(0, true, Verdict::kCorrected),
                                          window(100, false, Verdict::kCannotJudge),
                                          window(200, true, Verdict::kCloud)};
  detail::inherit_target_verdicts(windows, {true, true, true});
  EXPECT_EQ(windows[1].verdict, Verdict::kCorrected);
  EXPECT_TRUE(windows[1].inherited);
  EXPECT_NE(windows[1].reason.find("calibrator scan at 0 s"), std::string::npos);
}

TEST(Inheritance, ACloudIsNeverInheritedAndTheReasonSaysWhy) {
  std::vector<WindowDiagnosis> windows = {window(0, true, Verdict::kCloud),
                                          window(100, false, Verdict::kCannotJudge),
                                          window(200, true, Verdict::kCloud)};
  detail::inherit_target_verdicts(windows, {true, true, true});
  EXPECT_EQ(windows[1].verdict, Verdict::kCannotJudge);
  EXPECT_FALSE(windows[1].inherited);
  EXPECT_NE(windows[1].reason.find("not seen by this scan's radiometers"), std::string::npos);
}

TEST(Inheritance, AProblemStartingInTheNextCalibratorScanCoversTheTargetScan) {
  std::vector<WindowDiagnosis> windows = {window(0, true, Verdict::kCorrected),
                                          window(100, false, Verdict::kCannotJudge),
                                          window(200, true, Verdict::kDryTurbulence)};
  windows[1].reason += "; flagged: A3 (spikes)";
  detail::inherit_target_verdicts(windows, {true, true, true});
  EXPECT_EQ(windows[1].verdict, Verdict::kDryTurbulence);
  EXPECT_NE(windows[1].reason.find("flagged: A3 (spikes)"), std::string::npos);
}

TEST(Inheritance, WithoutItsOwnRadiometerEvidenceATargetScanInheritsNothing) {
  std::vector<WindowDiagnosis> windows = {window(0, true, Verdict::kCorrected),
                                          window(100, false, Verdict::kCannotJudge)};
  detail::inherit_target_verdicts(windows, {true, false});
  EXPECT_EQ(windows[1].verdict, Verdict::kCannotJudge);
}

}  // namespace
}  // namespace wvr
