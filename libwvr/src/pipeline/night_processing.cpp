#include "wvr/night_processing.hpp"

#include <chrono>
#include <iomanip>
#include <map>
#include <sstream>

#include "wvr/brightness_convention_check.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr const char* kKeyAttribute = "processing_key";
constexpr const char* kSiteKeyAttribute = "site_key";

// Key text: "name=value;" pairs, numbers with round-trip precision.
class KeyText {
 public:
  KeyText() { out_ << std::setprecision(17); }
  template <typename T>
  KeyText& add(const char* name, const T& value) {
    out_ << name << '=' << value << ';';
    return *this;
  }
  KeyText& add(const char* name, const std::optional<double>& value) {
    out_ << name << '=';
    if (value) out_ << *value;
    out_ << ';';
    return *this;
  }
  std::string str() const { return out_.str(); }

 private:
  std::ostringstream out_;
};

// The stored group of `stage` when it may be reused: its keys equal the given ones (an empty
// key matches anything).
const ResultGroup* reusable(const Night& night,
                            const char* stage,
                            const std::string& key,
                            const std::string& site_key,
                            bool allowed,
                            std::vector<std::string>& notes) {
  if (!allowed) return nullptr;
  const ResultGroup* group = night.find_result(stage);
  if (group == nullptr) return nullptr;
  const auto stored = group->attributes.find(kKeyAttribute);
  if (stored == group->attributes.end()) {
    notes.push_back(std::string("the stored ") + stage +
                    " records no options (an older file); it was reused as it is");
    return group;
  }
  if (!key.empty() && stored->second != key) return nullptr;
  if (!site_key.empty()) {
    const auto stored_site = group->attributes.find(kSiteKeyAttribute);
    if (stored_site == group->attributes.end() || stored_site->second != site_key) return nullptr;
  }
  return group;
}

void with_keys(ResultGroup& group, const std::string& key, const std::string& site_key = "") {
  group.attributes[kKeyAttribute] = key;
  if (!site_key.empty()) group.attributes[kSiteKeyAttribute] = site_key;
}

// Every later stage needs PWV somewhere: a night without a single usable retrieval sample is
// refused with the reasons counted, instead of NaN medians that read like results.
void require_usable_retrieval(const NightRetrieval& retrieval) {
  std::map<std::uint8_t, std::size_t> unusable_by_reason;
  for (const std::uint8_t flags : retrieval.flags) {
    if ((flags & kRetrievalUnusable) == 0) return;
    ++unusable_by_reason[flags & kRetrievalUnusable];
  }
  std::string reasons;
  for (const auto& [flags, count] : unusable_by_reason) {
    reasons += (reasons.empty() ? "" : "; ") + std::to_string(count) + " " +
               describe_retrieval_flags(flags);
  }
  throw NothingUsable("nothing usable: none of the " + std::to_string(retrieval.flags.size()) +
                      " radiometer samples (" + std::to_string(retrieval.antennas) +
                      " antennas x " + std::to_string(retrieval.samples) + " times) gives a PWV (" +
                      (reasons.empty() ? "no samples" : reasons) + ")");
}

// Records the wall time since the previous mark under `step`.
class StepClock {
 public:
  explicit StepClock(std::vector<std::pair<std::string, double>>& steps) : steps_(steps) {}
  void mark(const char* step) {
    const auto now = std::chrono::steady_clock::now();
    steps_.emplace_back(step, std::chrono::duration<double>(now - last_).count());
    last_ = now;
  }

 private:
  std::vector<std::pair<std::string, double>>& steps_;
  std::chrono::steady_clock::time_point last_ = std::chrono::steady_clock::now();
};

bool at_least(const NightProcessingOptions& o, NightStage stage) {
  return static_cast<int>(o.last_stage) >= static_cast<int>(stage);
}

}  // namespace

const char* to_string(NightStage stage) {
  switch (stage) {
    case NightStage::kRetrieval:
      return "retrieval";
    case NightStage::kCalibration:
      return "calibration";
    case NightStage::kCorrection:
      return "correction";
    case NightStage::kDiagnosis:
      return "diagnosis";
    case NightStage::kTurbulence:
      return "turbulence";
  }
  return "unknown";
}

void NightProcessingOptions::validate() const {
  if (retrieval) retrieval->validate();
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
  if (calibration) calibration->validate();
  if (obs_freq_ghz && (!std::isfinite(*obs_freq_ghz) || *obs_freq_ghz <= 0.0))
    throw InvalidInput(describe_value("obs_freq_ghz", *obs_freq_ghz) +
                       " is not a positive frequency (GHz)");
  thresholds.validate();
  turbulence.validate();
  path_prediction.validate();
}

std::string retrieval_processing_key(const NightRetrievalOptions& o) {
  return KeyText()
      .add("coefficient_window_s", o.coefficient_window_s)
      .add("fit_liquid", o.window_fit.fit_liquid)
      .add("fit_temperature_offset", o.window_fit.fit_temperature_offset)
      .add("calibration_terms", static_cast<int>(o.window_fit.calibration))
      .add("absorption_model", o.absorption_model)
      .str();
}

std::string site_processing_key(const SiteConfig& site) {
  const SiteParameters& p = site.parameters;
  KeyText key;
  key.add("site.altitude_m", p.altitude_m)
      .add("site.surface_temperature_k", p.surface_temperature_k)
      .add("site.surface_pressure_hpa", p.surface_pressure_hpa)
      .add("site.lapse_rate_k_per_km", p.lapse_rate_k_per_km)
      .add("site.tropopause_m", p.tropopause_m)
      .add("site.water_scale_height_m", p.water_scale_height_m);
  if (p.inversion) {
    key.add("site.inversion_base_above_ground_m", p.inversion->base_above_ground_m)
        .add("site.inversion_depth_m", p.inversion->depth_m)
        .add("site.inversion_temperature_jump_k", p.inversion->temperature_jump_k);
  }
  return key.str();
}

std::string calibration_processing_key(const CalibrationOptions& o) {
  return KeyText()
      .add("form",
           o.form == ScalingSolveForm::kAntennaPhases ? "antenna phases" : "baseline phases")
      .add("antenna_scaling", to_string(o.antenna_scaling))
      .add("antenna_scale_prior_sigma", o.antenna_scale_prior_sigma)
      .add("segment_s", o.segment_s)
      .add("reference_antenna", o.reference_antenna)
      .add("loss_scale", o.loss_scale)
      .add("scale_search_min", o.scale_search_min)
      .add("scale_search_max", o.scale_search_max)
      .add("max_iterations", o.max_iterations)
      .str();
}

NightProcessingResult process_night(const Night& night, const NightProcessingOptions& options) {
  options.validate();
  NightProcessingResult r;
  r.last_stage = options.last_stage;
  r.site = resolve_night_site(night, options.site, options.site_description);
  if (r.site.source == SiteSource::kNightDefaults) r.notes.push_back("site: " + r.site.description);
  r.phase_per_path = site_phase_per_path(r.site.site.parameters);
  StepClock clock(r.step_wall_s);

  // Retrieval.
  const NightRetrievalOptions retrieval_options = [&] {
    NightRetrievalOptions o = options.retrieval.value_or(NightRetrievalOptions{});
    o.threads = options.threads;
    return o;
  }();
  const std::string site_key = site_processing_key(r.site.site);
  if (const ResultGroup* stored = reusable(
          night, "retrieval", options.retrieval ? retrieval_processing_key(retrieval_options) : "",
          options.site ? site_key : "", options.reuse_stored_results, r.notes)) {
    r.retrieval = retrieval_from_result_group(*stored);
    if (r.retrieval.antennas != night.antenna_count() || r.retrieval.samples != night.time_count())
      throw InvalidInput("/results/retrieval holds " + std::to_string(r.retrieval.antennas) +
                         " antennas x " + std::to_string(r.retrieval.samples) +
                         " samples; the night has " + std::to_string(night.antenna_count()) +
                         " x " + std::to_string(night.time_count()) +
                         " (a retrieval of another night)");
    r.retrieval_reused = true;
  } else {
    r.retrieval = retrieve_night(night, r.site.site.parameters, retrieval_options);
    r.result_groups.push_back(to_result_group(r.retrieval, night));
    with_keys(r.result_groups.back(), retrieval_processing_key(retrieval_options), site_key);
  }
  require_usable_retrieval(r.retrieval);
  if (const BrightnessConventionCheck convention = check_brightness_convention(night, r.retrieval);
      convention.looks_like_other_convention) {
    r.notes.push_back("warning: " + convention.message);
  }
  clock.mark("retrieval");
  r.coefficients = CoefficientWindows::from_retrieval(r.retrieval);
  r.paths = compute_wvr_paths(night, r.coefficients);
  clock.mark("paths");
  if (!at_least(options, NightStage::kCalibration)) return r;

  // Calibration and the metrics it gives.
  const std::string calibration_key =
      options.calibration ? calibration_processing_key(*options.calibration) : std::string();
  const ResultGroup* stored_calibration = r.retrieval_reused
                                              ? reusable(night, "calibration", calibration_key, "",
                                                         options.reuse_stored_results, r.notes)
                                              : nullptr;
  if (stored_calibration != nullptr) {
    r.calibration =
        calibration_from_result_group(*stored_calibration, night.antenna_count(), "night");
    r.calibration_reused = true;
  } else {
    CalibrationOptions calibration_options = options.calibration.value_or(CalibrationOptions{});
    calibration_options.threads = options.threads;
    r.calibration = solve_scaling(night, r.paths, r.phase_per_path, calibration_options);
    r.result_groups.push_back(calibration_result_group(*r.calibration));
    with_keys(r.result_groups.back(), calibration_processing_key(calibration_options));
  }
  if (options.require_calibration && r.calibration->status == CalibrationStatus::kNoData) {
    throw NothingUsable("nothing usable for the scaling solve: " + r.calibration->message);
  }
  // A failed solve leaves no scales: the correction then applies the model's path unscaled.
  if (r.calibration->antenna_scale.empty())
    r.calibration->antenna_scale.assign(night.antenna_count(), 1.0);
  if (r.calibration->antenna_scale_sigma.empty())
    r.calibration->antenna_scale_sigma.assign(night.antenna_count(), 0.0);
  clock.mark("calibration");
  r.path_prediction =
      predict_night_missing_paths(night, r.retrieval, r.paths, options.path_prediction);
  if (r.path_prediction) r.notes.push_back(r.path_prediction->brief_report(night));
  clock.mark("prediction");
  r.metrics = evaluate_correction(night, r.path_prediction ? r.path_prediction->paths : r.paths,
                                  r.calibration->antenna_scale, r.phase_per_path);
  clock.mark("metrics");
  if (!at_least(options, NightStage::kCorrection)) return r;

  // Phase corrections at the observing frequency.
  r.obs_freq = night_observing_frequency(night, options.obs_freq_ghz);
  r.corrections =
      compute_phase_corrections(night, r.coefficients, r.calibration->antenna_scale,
                                r.obs_freq->freq_ghz, r.phase_per_path(r.obs_freq->freq_ghz));
  if (r.path_prediction) apply_predicted_paths(*r.corrections, *r.path_prediction);
  r.result_groups.push_back(correction_result_group(*r.corrections, *r.metrics));
  clock.mark("correction");
  if (!at_least(options, NightStage::kDiagnosis)) return r;

  r.diagnosis = diagnose_night(night, r.retrieval, r.paths, *r.metrics, r.phase_per_path,
                               options.thresholds, options.threads);
  r.result_groups.push_back(diagnosis_result_group(*r.diagnosis));
  clock.mark("diagnosis");
  if (!at_least(options, NightStage::kTurbulence)) return r;

  TurbulenceOptions turbulence_options = options.turbulence;
  turbulence_options.threads = options.threads;
  r.turbulence = analyse_night_turbulence(night, r.retrieval, r.paths, *r.diagnosis, *r.metrics,
                                          r.obs_freq->freq_ghz, turbulence_options);
  clock.mark("turbulence");
  return r;
}

}  // namespace wvr
