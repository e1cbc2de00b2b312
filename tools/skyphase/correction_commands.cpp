// skyphase calibrate and skyphase correct: the scaling solve against calibrator phases and
// the application of the phase corrections.
#include <chrono>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "output.hpp"
#include "path_prediction_json.hpp"
#include "pipeline.hpp"
#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/site_config.hpp"

namespace skyphase {
namespace {

void print_summary(const wvr::Night& night,
                   const wvr::NightProcessingResult& result,
                   std::span<const double> antenna_scale,
                   std::span<const double> antenna_scale_sigma,
                   double scale,
                   double scale_sigma,
                   bool calibrated,
                   const std::string& status,
                   const std::string& output,
                   Format format) {
  const wvr::CorrectionMetrics& m = *result.metrics;
  if (format == Format::kJson) {
    nlohmann::ordered_json j;
    j["scale"] = scale;
    j["scale_sigma"] = scale_sigma;
    j["calibrated"] = calibrated;
    // Which scaling the solve kept and the test that chose it (null when forced).
    j["per_antenna_scale"] = result.calibration->per_antenna_scale;
    j["antenna_scale_statistic"] = result.calibration->antenna_scale_statistic;
    j["antenna_scale_threshold"] = result.calibration->antenna_scale_threshold;
    j["status"] = status;
    j["phase_rms_before_deg"] = m.phase_rms_before_deg;
    j["phase_rms_after_deg"] = m.phase_rms_after_deg;
    j["improvement_factor"] = m.improvement_factor;
    j["coherence_before"] = m.coherence_before;
    j["coherence_after"] = m.coherence_after;
    j["baselines"] = m.baselines.size();
    nlohmann::ordered_json antennas = nlohmann::ordered_json::array();
    for (std::size_t a = 0; a < night.antenna_count(); ++a) {
      const wvr::AntennaMetrics& am = m.antennas[a];
      antennas.push_back({{"antenna", night.array.antenna_names[a]},
                          {"scale", antenna_scale[a]},
                          {"scale_sigma", antenna_scale_sigma[a]},
                          {"phase_rms_before_deg", am.rms_before_deg},
                          {"phase_rms_after_deg", am.rms_after_deg},
                          {"improvement_factor", am.improvement_factor},
                          {"coherence_before", am.coherence_before},
                          {"coherence_after", am.coherence_after}});
    }
    j["antennas"] = antennas;
    j["path_prediction"] = path_prediction_json(night, result);
    j["output"] = output;
    print_json(j);
    return;
  }
  std::cout << "scale " << with_uncertainty(scale, scale_sigma)
            << (calibrated ? "" : " (the scaling solve failed: corrections use scale 1)") << " ["
            << status << "]\n"
            << "calibrator phase rms (median over " << m.baselines.size()
            << " baselines): " << fixed(m.phase_rms_before_deg, 2) << " deg before, "
            << fixed(m.phase_rms_after_deg, 2) << " deg after, improvement x"
            << fixed(m.improvement_factor, 2) << "\n"
            << "coherence: " << fixed(m.coherence_before, 3) << " before, "
            << fixed(m.coherence_after, 3) << " after\n"
            << "-> " << output << "\n";
}

struct CalibrateOptions {
  CommonOptions common;
  bool per_antenna = false;
  bool one_scale = false;
  bool baseline_solve = false;
  double segment_s = 0.0;
  int reference_antenna = 0;
};

void run_calibrate(const CalibrateOptions& o) {
  wvr::NightProcessingOptions options = processing_options(o.common, wvr::NightStage::kCalibration);
  wvr::CalibrationOptions calibration;
  if (o.per_antenna) calibration.antenna_scaling = wvr::AntennaScaling::kPerAntenna;
  if (o.one_scale) calibration.antenna_scaling = wvr::AntennaScaling::kOneForArray;
  if (o.baseline_solve) calibration.form = wvr::ScalingSolveForm::kBaselinePhases;
  calibration.segment_s = o.segment_s;
  calibration.reference_antenna = o.reference_antenna;
  options.calibration = calibration;
  options.require_calibration = true;
  options.validate();
  const Processed p = process_and_write(o.common, options);
  const wvr::CalibrationResult& c = *p.result.calibration;
  if (o.common.format != Format::kJson) print_notes(p.result);
  print_summary(p.night, p.result, c.antenna_scale, c.antenna_scale_sigma, c.scale, c.scale_sigma,
                c.ok(), c.brief_report(), o.common.output_file, o.common.format);
}

void run_correct(const CommonOptions& o) {
  const Processed p = process_and_write(o, processing_options(o, wvr::NightStage::kCorrection));
  const wvr::CalibrationResult& c = *p.result.calibration;
  if (o.format != Format::kJson) print_notes(p.result);
  print_summary(p.night, p.result, c.antenna_scale, c.antenna_scale_sigma, c.scale, c.scale_sigma,
                c.ok(), p.result.calibration_reused ? "calibration applied" : c.brief_report(),
                o.output_file, o.format);
}

}  // namespace

void add_calibrate_command(CLI::App& app) {
  auto options = std::make_shared<CalibrateOptions>();
  CLI::App* cmd = app.add_subcommand(
      "calibrate", "Solve the radiometer phase scaling against calibrator phases");
  add_common(*cmd, options->common);
  // Default: both fitted, per-antenna scales kept when a BIC test finds them significant.
  CLI::Option* per_antenna =
      cmd->add_flag("--per-antenna", options->per_antenna,
                    "Always fit one scale per antenna (prior around the array scale); by "
                    "default they are kept when the calibrator residuals show them significant");
  cmd->add_flag("--one-scale", options->one_scale, "Always fit one scale for the whole array")
      ->excludes(per_antenna);
  cmd->add_flag("--baseline-solve", options->baseline_solve,
                "Fit every baseline phase instead of antenna phases (memory grows with baselines)");
  cmd->add_option("--segment-s", options->segment_s,
                  "Fit one array scale per time segment of this length (s)");
  cmd->add_option("--reference-antenna", options->reference_antenna, "Reference antenna index")
      ->capture_default_str();
  cmd->callback([options] { run_calibrate(*options); });
}

void add_correct_command(CLI::App& app) {
  auto options = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand(
      "correct", "Apply the phase corrections and report before/after statistics");
  add_common(*cmd, *options);
  add_frequency_option(*cmd, *options);
  cmd->callback([options] { run_correct(*options); });
}

}  // namespace skyphase
