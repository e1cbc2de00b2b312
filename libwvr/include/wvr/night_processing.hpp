#pragma once
// The night pipeline: the one place where a night is processed, stage after stage, for the
// command line, the Python package, the report and pipelines that link the library.
//
//   site (wvr/night_site.hpp) -> retrieval -> coefficient windows -> radiometer paths ->
//   scaling solve -> metrics -> phase corrections (wvr/observing_frequency.hpp) ->
//   diagnosis -> turbulence (structure functions, wind, fast-switching advice)
//
// Stages already stored in the night's result groups are reused when they match: a stored
// group records the options that made it (attributes "processing_key" and, for the retrieval,
// "site_key"); a group without them (written by older versions) is reused as it is. A stage is
// recomputed when an earlier stage was. Retrieval or calibration options left unset mean "the
// stored one, whatever its options, or the defaults when there is none", so that correcting or
// diagnosing a night applies the retrieval and calibration made for it; a given site replaces
// a stored retrieval made with another site.
//
//   wvr::NightProcessingOptions options;                // every stage, defaults
//   wvr::NightProcessingResult r = wvr::process_night(night, options);
//   r.metrics->phase_rms_after_deg; r.diagnosis->windows; r.turbulence->wind.speed_m_s;
//   wvr::add_result_groups("night.h5", "night-processed.h5", r.result_groups);

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/night.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/night_site.hpp"
#include "wvr/night_turbulence.hpp"
#include "wvr/observing_frequency.hpp"
#include "wvr/path_prediction.hpp"

namespace wvr {

// How far to go; every stage includes the ones before it.
enum class NightStage { kRetrieval, kCalibration, kCorrection, kDiagnosis, kTurbulence };
const char* to_string(NightStage stage);  // "retrieval", ..., "turbulence"

struct NightProcessingOptions {
  // A site that overrides the night's own (see wvr/night_site.hpp), and how to name it.
  std::optional<SiteConfig> site;
  std::string site_description = "given site";
  // Unset: the stored retrieval if any, else the defaults; set: retrieved with these unless a
  // stored retrieval was made with the same options.
  std::optional<NightRetrievalOptions> retrieval;
  int threads = 0;  // worker threads of every stage (0 = all cores); results do not depend on it
  // Unset: the stored calibration if any, else the defaults; set: solved with these unless a
  // stored calibration was made with the same options.
  std::optional<CalibrationOptions> calibration;
  // Unset: the night's (wvr/observing_frequency.hpp).
  std::optional<double> obs_freq_ghz;
  DiagnosisThresholds thresholds;
  TurbulenceOptions turbulence;
  // Paths of antennas whose radiometer gave no samples, predicted from the others for the
  // metrics and corrections (from kCalibration on; the scaling solve uses measured paths).
  PathPredictionOptions path_prediction;
  NightStage last_stage = NightStage::kTurbulence;
  bool reuse_stored_results = true;
  // Throw NothingUsable when the calibrator rows give no scale (for a caller whose job is the
  // scale); otherwise the correction applies the model's path unscaled and says so.
  bool require_calibration = false;

  void validate() const;  // throws InvalidInput naming the field
};

struct NightProcessingResult {
  NightStage last_stage = NightStage::kTurbulence;
  ResolvedSite site;
  PhasePerPath phase_per_path;
  NightRetrieval retrieval;
  bool retrieval_reused = false;
  CoefficientWindows coefficients;
  AntennaPaths paths;
  // From kCalibration on, when some radiometer samples were missing: the predicted paths
  // (metrics and corrections use them; `paths` stays the measured ones).
  std::optional<PredictedPaths> path_prediction;
  std::optional<CalibrationResult> calibration;  // from kCalibration on
  bool calibration_reused = false;
  std::optional<CorrectionMetrics> metrics;     // from kCalibration on
  std::optional<ObservingFrequency> obs_freq;   // from kCorrection on
  std::optional<PhaseCorrections> corrections;  // from kCorrection on
  std::optional<NightDiagnosis> diagnosis;      // from kDiagnosis on
  std::optional<NightTurbulence> turbulence;    // at kTurbulence
  // The result groups computed now (not the reused ones), in stage order, for
  // wvr::add_result_groups.
  std::vector<ResultGroup> result_groups;
  // Things a reader of the output should know (defaults used, stored stages reused, ...).
  std::vector<std::string> notes;
  // Wall time of each step run, in order ("retrieval", "paths", "calibration", "prediction",
  // "metrics", "correction", "diagnosis", "turbulence"): where a night's processing time goes.
  std::vector<std::pair<std::string, double>> step_wall_s;
};

// Runs the stages up to options.last_stage. Throws InvalidInput for bad options, a night the
// stages cannot use (no radiometer data, no observing frequency when one is needed) or a stored
// result group that does not fit the night.
NightProcessingResult process_night(const Night& night, const NightProcessingOptions& options);

// The key stored with a stage's result group (attribute "processing_key"): the options that
// determine it, as text.
std::string retrieval_processing_key(const NightRetrievalOptions& options);
std::string site_processing_key(const SiteConfig& site);
std::string calibration_processing_key(const CalibrationOptions& options);

}  // namespace wvr
