#pragma once
// Readers of the result groups the library writes whose stage headers do not declare one:
// the "correction" and "diagnosis" groups read back into their types. (The retrieval's and
// the calibration's readers sit beside their writers: retrieval_from_result_group in
// wvr/night_retrieval.hpp, calibration_from_result_group in wvr/correction.hpp.)
//
// What the groups do not store comes back empty: a correction group holds the baseline and
// antenna metrics but not the per-baseline sample counts; a diagnosis group holds every
// window's verdict, numbers and antenna faults but not the reason text or the notes.

#include <string>

#include "wvr/correction.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/night.hpp"

namespace wvr {

struct StoredCorrection {
  PhaseCorrections corrections;
  CorrectionMetrics metrics;
};

// Throws InvalidInput starting with `source` and naming a missing or mis-shaped dataset.
StoredCorrection correction_from_result_group(const ResultGroup& group, const std::string& source);
NightDiagnosis diagnosis_from_result_group(const ResultGroup& group,
                                           const std::vector<std::string>& antenna_names,
                                           const std::string& source);

}  // namespace wvr
