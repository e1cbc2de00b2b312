// skyphase calibrate and skyphase correct: the scaling solve against calibrator phases and
// the application of the phase corrections.
#include <chrono>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <type_traits>
#include <variant>

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
                   const std::string& status,
                   const std::string& output,
                   Format format) {
  const wvr::CalibrationResult& c = *result.calibration;
  const wvr::CorrectionMetrics& m = *result.metrics;
  if (format == Format::kJson) {
    nlohmann::ordered_json j;
    // The calibration's scalar fields from its table (wvr/calibration.hpp): the scale, which
    // scaling the solve kept and the test that chose it (NaN, written null, when forced).
    for (const wvr::ResultArrayField<wvr::CalibrationResult>& field : wvr::calibration_fields()) {
      std::visit(
          [&](auto member) {
            if constexpr (std::is_arithmetic_v<std::decay_t<decltype(c.*member)>>)
              j[field.name] = c.*member;
          },
          field.member);
    }
    j["calibrated"] = c.ok();
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
                          {"scale", c.antenna_scale[a]},
                          {"scale_sigma", c.antenna_scale_sigma[a]},
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
  std::cout << "scale " << with_uncertainty(c.scale, c.scale_sigma)
            << (c.ok() ? "" : " (the scaling solve failed: corrections use scale 1)") << " ["
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
  if (o.common.format != Format::kJson) print_notes(p.result);
  print_summary(p.night, p.result, p.result.calibration->brief_report(), o.common.output_file,
                o.common.format);
}

void run_correct(const CommonOptions& o) {
  const Processed p = process_and_write(o, processing_options(o, wvr::NightStage::kCorrection));
  if (o.format != Format::kJson) print_notes(p.result);
  print_summary(
      p.night, p.result,
      p.result.calibration_reused ? "calibration applied" : p.result.calibration->brief_report(),
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
