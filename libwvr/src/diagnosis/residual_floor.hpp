#pragma once
// What part of the radiometer residual is model error and what part is news.
//
// A real sky and real radiometers never match the retrieval's model: calibration offsets and
// gains per unit, another absorption or temperature profile. Their residual is systematic
// (constant per antenna and channel, or slow and common to the array) and far above the
// thermal noise, so a chi-square against thermal noise alone calls every window cloud. Here
// the residual of every sample is taken against the retrieval's window model (linearised in
// path: the part a path change explains is projected out with the retrieval's own
// combination weights), its systematic part is estimated from the night itself, and what is
// left is judged against thermal noise plus the residual's own non-thermal scatter.

#include <cstddef>
#include <string>
#include <vector>

#include "wvr/diagnosis.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr::detail {

struct ResidualEvidence {
  RadiometerFloor floor;
  // [antenna, time]: chi2/dof of the residual after its systematic part, against thermal noise
  // plus model error (dof = channels - 1); NaN where the sample or its window is unusable.
  std::vector<double> chi2_per_dof;
  // [antenna, time]: chi2/dof of the unit's slow drift (taken out of chi2_per_dof) against the
  // same floor; NaN where chi2_per_dof is.
  std::vector<double> drift_chi2_per_dof;
};

// Systematic part: per antenna and channel the median over the night's retrieval windows of
// the window-mean residual (an offset), plus, common to all antennas, the running median over
// `systematic_window_s` of the windows' array-median remainder (a slow pattern), plus per
// antenna and channel a response proportional to the sample's path change (channel gains that
// differ; a weighted median over windows of the per-window slope). Short events (a cloud, a
// faulty unit) cover less than half of any of these medians and stay in the remainder.
// Model error per antenna and channel: the robust (median-based) rms of the per-sample
// remainder over the night, less its thermal part, floored at zero (a cloud or a fault
// covering less than half of the night does not raise it). Then per antenna and channel the
// slow drift of the remainder (its running median over `systematic_window_s`, without the
// windows where the array's remainder stands out) is taken out of chi2_per_dof and given apart
// in drift_chi2_per_dof, for the diagnosis to judge against the array's drifts.
ResidualEvidence residual_evidence(const Night& night,
                                   const NightRetrieval& retrieval,
                                   double systematic_window_s);

}  // namespace wvr::detail
