// The night pipeline from Python: wvr.process_night and its typed results (calibration,
// metrics, corrections, diagnosis, turbulence). Arrays are read-only numpy views of the C++
// results (no copy), kept alive by the result object that owns them.
#include "wvr/night_processing.hpp"

#include <pybind11/stl.h>

#include <functional>
#include <optional>

#include "arrays.hpp"
#include "common.hpp"
#include "result_fields.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

py::ssize_t extent(std::size_t n) { return static_cast<py::ssize_t>(n); }

// A property returning a read-only view of `member` with the shape `shape_of(owner)`.
template <typename Owner, typename T>
auto view(std::vector<T> Owner::*member,
          std::function<std::vector<py::ssize_t>(const Owner&)> shape_of) {
  return [member, shape_of](const py::object& self) {
    const Owner& owner = self.cast<const Owner&>();
    return read_only_view(owner.*member, shape_of(owner), self);
  };
}

// 1-D views sized by the vector itself.
template <typename Owner, typename T>
auto view_1d(std::vector<T> Owner::*member) {
  return view<Owner, T>(member, [member](const Owner& o) {
    return std::vector<py::ssize_t>{extent((o.*member).size())};
  });
}

std::vector<py::ssize_t> antenna_time(const AntennaPaths& p) {
  return {extent(p.antennas), extent(p.time_s.size())};
}

std::vector<py::ssize_t> corrections_antenna_time(const PhaseCorrections& c) {
  return {extent(c.antenna_scale.size()), extent(c.time_s.size())};
}

NightStage stage_by_name(const std::string& name) {
  for (NightStage s : {NightStage::kRetrieval, NightStage::kCalibration, NightStage::kCorrection,
                       NightStage::kDiagnosis, NightStage::kTurbulence}) {
    if (name == to_string(s)) return s;
  }
  throw InvalidInput("last_stage = '" + name +
                     "' is not one of retrieval, calibration, correction, diagnosis, turbulence");
}

NightProcessingResult run(const Night& night,
                          std::optional<SiteConfig> site,
                          std::optional<double> window_s,
                          bool fit_liquid,
                          bool fit_temperature,
                          std::optional<bool> per_antenna_scale,
                          double antenna_scale_prior_sigma,
                          double segment_s,
                          int reference_antenna,
                          std::optional<double> obs_freq_ghz,
                          std::optional<DiagnosisThresholds> thresholds,
                          double advice_layer_height_m,
                          double advice_separation_deg,
                          double advice_target_rms_deg,
                          const std::string& last_stage,
                          bool reuse_stored_results,
                          int threads,
                          const std::string& path_prediction) {
  NightProcessingOptions options;
  if (path_prediction == "off") {
    options.path_prediction.enabled = false;
  } else {
    options.path_prediction.method = path_prediction_method_from_string(path_prediction);
  }
  options.site = std::move(site);
  if (window_s || fit_liquid || fit_temperature) {
    NightRetrievalOptions retrieval;
    if (window_s) retrieval.coefficient_window_s = *window_s;
    retrieval.window_fit.fit_liquid = fit_liquid;
    retrieval.window_fit.fit_temperature_offset = fit_temperature;
    options.retrieval = retrieval;
  }
  if (per_antenna_scale || segment_s != 0.0 || reference_antenna != 0) {
    CalibrationOptions calibration;
    calibration.antenna_scaling = antenna_scaling_of(per_antenna_scale);
    calibration.antenna_scale_prior_sigma = antenna_scale_prior_sigma;
    calibration.segment_s = segment_s;
    calibration.reference_antenna = reference_antenna;
    options.calibration = calibration;
  }
  options.obs_freq_ghz = obs_freq_ghz;
  if (thresholds) options.thresholds = *thresholds;
  options.turbulence.advice_layer_height_m = advice_layer_height_m;
  options.turbulence.advice_separation_deg = advice_separation_deg;
  options.turbulence.advice_target_rms_deg = advice_target_rms_deg;
  options.last_stage = stage_by_name(last_stage);
  options.reuse_stored_results = reuse_stored_results;
  options.threads = threads;
  options.validate();
  py::gil_scoped_release release;
  return process_night(night, options);
}

void export_structure_types(py::module_& m) {
  py::class_<StructureFunctionEstimate>(m, "StructureFunctionEstimate",
                                        "Binned structure function points.")
      .def_property_readonly("separation", view_1d(&StructureFunctionEstimate::separation),
                             "Separation of each point (m; s for temporal estimates).")
      .def_property_readonly("value_m2", view_1d(&StructureFunctionEstimate::value_m2),
                             "D at each point (m^2 of path).")
      .def_property_readonly("pair_count", [](const StructureFunctionEstimate& e) {
        return std::vector<std::size_t>(e.pair_count);
      });
  py::class_<BrokenPowerLawFit>(m, "BrokenPowerLawFit",
                                "Broken power law fitted to a structure function.")
      .def_property_readonly("ok", &BrokenPowerLawFit::ok)
      .def_readonly("message", &BrokenPowerLawFit::message)
      .def_readonly("has_break", &BrokenPowerLawFit::has_break)
      .def_readonly("slope_at_bound", &BrokenPowerLawFit::slope_at_bound)
      .def_readonly("amplitude_m2", &BrokenPowerLawFit::amplitude_m2)
      .def_readonly("slope_short", &BrokenPowerLawFit::alpha_short)
      .def_readonly("slope_short_sigma", &BrokenPowerLawFit::alpha_short_sigma)
      .def_readonly("slope_long", &BrokenPowerLawFit::alpha_long)
      .def_readonly("slope_long_sigma", &BrokenPowerLawFit::alpha_long_sigma)
      .def_readonly("break_m", &BrokenPowerLawFit::break_m)
      .def_readonly("break_sigma_m", &BrokenPowerLawFit::break_sigma_m)
      .def_readonly("saturation_m2", &BrokenPowerLawFit::saturation_m2)
      .def_readonly("transition_width", &BrokenPowerLawFit::transition_width)
      .def_readonly("points_used", &BrokenPowerLawFit::points_used)
      .def(
          "evaluate_m2",
          [](const BrokenPowerLawFit& f, const py::handle& separation_m) {
            const std::vector<double> d = as_vector(separation_m, "separation_m");
            std::vector<double> out(d.size());
            for (std::size_t i = 0; i < d.size(); ++i) out[i] = f.evaluate_m2(d[i]);
            return read_only_array(out);
          },
          py::arg("separation_m"), "Model D (m^2) at the given separations (m).")
      .def("brief_report", &BrokenPowerLawFit::brief_report);
  py::class_<RegimeSlope>(m, "RegimeSlope", "Slope measured in one regime of the slab fit.")
      .def_readonly("measured", &RegimeSlope::measured)
      .def_readonly("slope", &RegimeSlope::slope)
      .def_readonly("slope_sigma", &RegimeSlope::slope_sigma)
      .def_readonly("points", &RegimeSlope::points)
      .def_readonly("message", &RegimeSlope::message);
  py::class_<SlabThicknessFit>(m, "SlabThicknessFit", "Slab (von Karman) shape fitted to D(d).")
      .def_property_readonly("ok", &SlabThicknessFit::ok)
      .def_readonly("message", &SlabThicknessFit::message)
      .def_property_readonly("constraint",
                             [](const SlabThicknessFit& f) { return to_string(f.constraint); })
      .def_readonly("thickness_m", &SlabThicknessFit::thickness_m)
      .def_readonly("thickness_low_m", &SlabThicknessFit::thickness_low_m)
      .def_readonly("thickness_high_m", &SlabThicknessFit::thickness_high_m)
      .def_readonly("path_m2_at_thickness", &SlabThicknessFit::path_m2_at_thickness)
      .def_readonly("outer_scale_m", &SlabThicknessFit::outer_scale_m)
      .def_readonly("thick", &SlabThicknessFit::thick)
      .def_readonly("thin", &SlabThicknessFit::thin)
      .def(
          "evaluate_m2",
          [](const SlabThicknessFit& f, const py::handle& separation_m) {
            const std::vector<double> d = as_vector(separation_m, "separation_m");
            std::vector<double> out(d.size());
            for (std::size_t i = 0; i < d.size(); ++i) out[i] = f.evaluate_m2(d[i]);
            return read_only_array(out);
          },
          py::arg("separation_m"))
      .def("brief_report", &SlabThicknessFit::brief_report);
  py::class_<NightSlabThickness>(
      m, "NightSlabThickness",
      "Slab fit of a night; its interval includes a jackknife over time segments.")
      .def_readonly("fit", &NightSlabThickness::fit)
      .def_readonly("log_thickness_sigma", &NightSlabThickness::log_thickness_sigma)
      .def_readonly("jackknife_low_m", &NightSlabThickness::jackknife_low_m)
      .def_readonly("jackknife_high_m", &NightSlabThickness::jackknife_high_m)
      .def_readonly("profile_low_m", &NightSlabThickness::profile_low_m)
      .def_readonly("profile_high_m", &NightSlabThickness::profile_high_m)
      .def_property_readonly("segment_thickness_m",
                             view_1d(&NightSlabThickness::segment_thickness_m))
      .def("brief_report", &NightSlabThickness::brief_report);
  py::class_<FittedStructureFunction>(m, "FittedStructureFunction",
                                      "One measured structure function with its fit.")
      .def_readonly("source", &FittedStructureFunction::source)
      .def_property_readonly("measured", &FittedStructureFunction::measured)
      .def_property_readonly("fitted", &FittedStructureFunction::fitted)
      .def_readonly("message", &FittedStructureFunction::message)
      .def_readonly("points", &FittedStructureFunction::points)
      .def_readonly("fit", &FittedStructureFunction::fit);
  py::class_<RadiometerTemporalStructure>(m, "RadiometerTemporalStructure",
                                          "Radiometer path difference of three baselines by lag.")
      .def_readonly("source", &RadiometerTemporalStructure::source)
      .def_property_readonly(
          "ok",
          [](const RadiometerTemporalStructure& r) { return r.status == DiagnosticStatus::kOk; })
      .def_readonly("message", &RadiometerTemporalStructure::message)
      .def_property_readonly("lag_s", view_1d(&RadiometerTemporalStructure::lag_s))
      .def_readonly("baselines", &RadiometerTemporalStructure::baselines)
      .def_property_readonly("baseline_length_m",
                             view_1d(&RadiometerTemporalStructure::baseline_length_m))
      .def_property_readonly("structure_m2", [](const RadiometerTemporalStructure& r) {
        py::list out;
        for (const auto& row : r.structure_m2) out.append(read_only_array(row));
        return out;
      });
  py::class_<WindEstimate>(m, "WindEstimate", "Frozen-flow velocity from the radiometer paths.")
      .def_property_readonly("ok", &WindEstimate::ok)
      .def_readonly("message", &WindEstimate::message)
      .def_readonly("east_m_s", &WindEstimate::east_m_s)
      .def_readonly("north_m_s", &WindEstimate::north_m_s)
      .def_readonly("speed_m_s", &WindEstimate::speed_m_s)
      .def_readonly("speed_sigma_m_s", &WindEstimate::speed_sigma_m_s)
      .def_readonly("direction_to_deg", &WindEstimate::direction_to_deg,
                    "Direction the screen moves towards, from north through east (deg).")
      .def_readonly("direction_sigma_deg", &WindEstimate::direction_sigma_deg)
      .def_readonly("pairs_used", &WindEstimate::pairs_used)
      .def("brief_report", &WindEstimate::brief_report);
  py::class_<CycleTimeSolution>(m, "CycleTimeSolution", "Fast-switching cycle time solution.")
      .def_property_readonly("status",
                             [](const CycleTimeSolution& s) { return to_string(s.status); })
      .def_readonly("cycle_time_s", &CycleTimeSolution::cycle_time_s)
      .def_readonly("effective_separation_m", &CycleTimeSolution::effective_separation_m)
      .def_readonly("floor_deg", &CycleTimeSolution::floor_deg)
      .def_readonly("saturation_deg", &CycleTimeSolution::saturation_deg)
      .def_readonly("message", &CycleTimeSolution::message);
  py::class_<FastSwitchingAdvice>(m, "FastSwitchingAdvice", "Holdaway fast-switching advice.")
      .def_readonly("uncorrected", &FastSwitchingAdvice::uncorrected)
      .def_readonly("corrected", &FastSwitchingAdvice::corrected)
      .def_property_readonly("cycle_time_s", view_1d(&FastSwitchingAdvice::cycle_time_s))
      .def_property_readonly("effective_separation_m",
                             view_1d(&FastSwitchingAdvice::effective_separation_m))
      .def_property_readonly("residual_uncorrected_deg",
                             view_1d(&FastSwitchingAdvice::residual_uncorrected_deg))
      .def_property_readonly("residual_corrected_deg",
                             view_1d(&FastSwitchingAdvice::residual_corrected_deg))
      .def_readonly("cycle_time_gain", &FastSwitchingAdvice::cycle_time_gain)
      .def_readonly("target_rms_deg", &FastSwitchingAdvice::target_rms_deg)
      .def_readonly("freq_ghz", &FastSwitchingAdvice::freq_ghz)
      .def("brief_report", &FastSwitchingAdvice::brief_report);
  py::class_<SwitchingAdvice>(m, "SwitchingAdvice", "Fast-switching advice of a night.")
      .def_property_readonly(
          "ok", [](const SwitchingAdvice& s) { return s.status == DiagnosticStatus::kOk; })
      .def_readonly("message", &SwitchingAdvice::message)
      .def_property_readonly("wet_model",
                             [](const SwitchingAdvice& s) { return to_string(s.wet_model); })
      .def_readonly("residual_used", &SwitchingAdvice::residual_used)
      .def_readonly("advice", &SwitchingAdvice::advice)
      .def_property_readonly("layer_height_m",
                             [](const SwitchingAdvice& s) { return s.input.layer_height_m; })
      .def_property_readonly(
          "calibrator_separation_deg",
          [](const SwitchingAdvice& s) { return s.input.calibrator_separation_deg; })
      .def_readonly("notes", &SwitchingAdvice::notes);
  py::class_<NightTurbulence>(m, "NightTurbulence",
                              "Structure functions with fits, wind and fast-switching advice.")
      .def_readonly("radiometer", &NightTurbulence::radiometer)
      .def_readonly("radiometer_noise_subtracted_m2_mean",
                    &NightTurbulence::radiometer_noise_subtracted_m2_mean)
      .def_readonly("slab", &NightTurbulence::slab)
      .def_readonly("radiometer_by_time", &NightTurbulence::radiometer_by_time)
      .def_readonly("before", &NightTurbulence::before)
      .def_readonly("after", &NightTurbulence::after)
      .def_readonly("before_by_lag", &NightTurbulence::before_by_lag)
      .def_readonly("after_by_lag", &NightTurbulence::after_by_lag)
      .def_property_readonly("before_by_lag_lag_s", view_1d(&NightTurbulence::before_by_lag_lag_s))
      .def_property_readonly("after_by_lag_lag_s", view_1d(&NightTurbulence::after_by_lag_lag_s))
      .def_readonly("wind", &NightTurbulence::wind)
      .def_readonly("switching", &NightTurbulence::switching);
}

void export_correction_types(py::module_& m) {
  py::class_<AntennaPaths>(m, "AntennaPaths", "Radiometer wet path of every antenna.")
      .def_readonly("antennas", &AntennaPaths::antennas)
      .def_property_readonly("time_s", view_1d(&AntennaPaths::time_s), "[time] (s)")
      .def_property_readonly("path_mm",
                             view<AntennaPaths, double>(&AntennaPaths::path_mm, antenna_time),
                             "[antenna, time] (mm), NaN where unusable")
      .def_property_readonly("flags",
                             view<AntennaPaths, std::uint8_t>(&AntennaPaths::flags, antenna_time),
                             "[antenna, time], 0 = usable");
  auto calibration =
      py::class_<CalibrationResult>(m, "CalibrationResult",
                                    "Scaling solve against calibrator phases.")
          .def_property_readonly("status",
                                 [](const CalibrationResult& c) { return to_string(c.status); })
          .def_property_readonly("ok", &CalibrationResult::ok)
          .def_readonly("message", &CalibrationResult::message)
          .def_readonly("rows_used", &CalibrationResult::rows_used)
          .def_readonly("rows_skipped", &CalibrationResult::rows_skipped)
          .def("brief_report", &CalibrationResult::brief_report);
  // The stored fields from the one field table (wvr/calibration.hpp).
  bind_result_fields(calibration, calibration_fields(), "a antennas, s segments");
  py::class_<BaselineMetrics>(m, "BaselineMetrics", "Calibrator phase statistics of one baseline.")
      .def_readonly("antenna_a", &BaselineMetrics::antenna_a)
      .def_readonly("antenna_b", &BaselineMetrics::antenna_b)
      .def_readonly("samples", &BaselineMetrics::samples)
      .def_readonly("rms_before_deg", &BaselineMetrics::rms_before_deg)
      .def_readonly("rms_after_deg", &BaselineMetrics::rms_after_deg)
      .def_readonly("coherence_before", &BaselineMetrics::coherence_before)
      .def_readonly("coherence_after", &BaselineMetrics::coherence_after)
      .def_readonly("improvement_factor", &BaselineMetrics::improvement_factor);
  py::class_<AntennaMetrics>(m, "AntennaMetrics", "Calibrator phase statistics of one antenna.")
      .def_readonly("samples", &AntennaMetrics::samples)
      .def_readonly("rms_before_deg", &AntennaMetrics::rms_before_deg)
      .def_readonly("rms_after_deg", &AntennaMetrics::rms_after_deg)
      .def_readonly("coherence_before", &AntennaMetrics::coherence_before)
      .def_readonly("coherence_after", &AntennaMetrics::coherence_after)
      .def_readonly("improvement_factor", &AntennaMetrics::improvement_factor);
  py::class_<CorrectionMetrics>(m, "CorrectionMetrics",
                                "Calibrator phase scatter before and after correction.")
      .def_readonly("baselines", &CorrectionMetrics::baselines)
      .def_readonly("antennas", &CorrectionMetrics::antennas)
      .def_property_readonly("corrected_phase_rad",
                             view_1d(&CorrectionMetrics::corrected_phase_rad),
                             "[calibrator row] (rad), NaN where not correctable")
      .def_readonly("phase_rms_before_deg", &CorrectionMetrics::phase_rms_before_deg)
      .def_readonly("phase_rms_after_deg", &CorrectionMetrics::phase_rms_after_deg)
      .def_readonly("coherence_before", &CorrectionMetrics::coherence_before)
      .def_readonly("coherence_after", &CorrectionMetrics::coherence_after)
      .def_readonly("improvement_factor", &CorrectionMetrics::improvement_factor)
      .def_property_readonly("antenna_phase_rms_before_deg",
                             [](const CorrectionMetrics& metrics) {
                               std::vector<double> v;
                               for (const AntennaMetrics& a : metrics.antennas)
                                 v.push_back(a.rms_before_deg);
                               return read_only_array(v);
                             })
      .def_property_readonly("antenna_phase_rms_after_deg", [](const CorrectionMetrics& metrics) {
        std::vector<double> v;
        for (const AntennaMetrics& a : metrics.antennas) v.push_back(a.rms_after_deg);
        return read_only_array(v);
      });
  py::class_<PhaseCorrections>(m, "PhaseCorrections",
                               "Antenna phase corrections at one observing frequency.")
      .def_readonly("obs_freq_ghz", &PhaseCorrections::obs_freq_ghz)
      .def_readonly("phase_per_path", &PhaseCorrections::phase_per_path)
      .def_property_readonly("antenna_scale", view_1d(&PhaseCorrections::antenna_scale))
      .def_property_readonly("time_s", view_1d(&PhaseCorrections::time_s))
      .def_property_readonly("phase_correction_rad",
                             view<PhaseCorrections, double>(&PhaseCorrections::phase_correction_rad,
                                                            corrections_antenna_time),
                             "[antenna, time] (rad), added to the antenna's phase; 0 where flagged")
      .def_property_readonly("path_mm", view<PhaseCorrections, double>(&PhaseCorrections::path_mm,
                                                                       corrections_antenna_time))
      .def_property_readonly("flags", view<PhaseCorrections, std::uint8_t>(
                                          &PhaseCorrections::flags, corrections_antenna_time))
      .def_property_readonly(
          "path_predicted",
          view<PhaseCorrections, std::uint8_t>(&PhaseCorrections::path_predicted,
                                               corrections_antenna_time),
          "[antenna, time] 0 measured, 1 predicted from neighbours, 2 by frozen flow")
      .def_property_readonly("predicted_expected_residual_mm",
                             view_1d(&PhaseCorrections::predicted_expected_residual_mm),
                             "[antenna] (mm), NaN where nothing was predicted");
  py::class_<PredictedPaths>(m, "PredictedPaths", R"doc(
Paths of antennas whose radiometer gave no samples, predicted from the other antennas by
kriging under the measured structure function (neighbours, or frozen flow with upwind samples
shifted by the wind). sample_method: [antenna, time] 0 measured, 1 neighbours, 2 frozen flow.
)doc")
      .def_property_readonly("method", [](const PredictedPaths& p) { return to_string(p.method); })
      .def_readonly("paths", &PredictedPaths::paths)
      .def_property_readonly("sample_method",
                             view<PredictedPaths, std::uint8_t>(
                                 &PredictedPaths::sample_method,
                                 [](const PredictedPaths& p) { return antenna_time(p.paths); }))
      .def_readonly("predicted_samples", &PredictedPaths::predicted_samples)
      .def_readonly("frozen_flow_samples", &PredictedPaths::frozen_flow_samples)
      .def_property_readonly("expected_residual_mm", view_1d(&PredictedPaths::expected_residual_mm),
                             "[antenna] (mm), NaN for antennas without predicted samples")
      .def_property_readonly("mean_donors", view_1d(&PredictedPaths::mean_donors))
      .def_readonly("structure_thickness_m", &PredictedPaths::structure_thickness_m)
      .def_readonly("wind_speed_m_s", &PredictedPaths::wind_speed_m_s)
      .def_readonly("wind_direction_to_deg", &PredictedPaths::wind_direction_to_deg)
      .def_readonly("message", &PredictedPaths::message)
      .def("any", &PredictedPaths::any)
      .def("brief_report", &PredictedPaths::brief_report, py::arg("night"));
  py::class_<PredictedAntennaResidual>(m, "PredictedAntennaResidual",
                                       "A predicted antenna beside the healthy ones.")
      .def_readonly("antenna", &PredictedAntennaResidual::antenna)
      .def_readonly("predicted_samples", &PredictedAntennaResidual::predicted_samples)
      .def_readonly("frozen_flow_samples", &PredictedAntennaResidual::frozen_flow_samples)
      .def_readonly("expected_residual_mm", &PredictedAntennaResidual::expected_residual_mm)
      .def_readonly("expected_residual_deg", &PredictedAntennaResidual::expected_residual_deg)
      .def_readonly("expected_phase_rms_after_deg",
                    &PredictedAntennaResidual::expected_phase_rms_after_deg)
      .def_readonly("phase_rms_after_deg", &PredictedAntennaResidual::phase_rms_after_deg);
  py::class_<PathPredictionSummary>(m, "PathPredictionSummary",
                                    "Predicted antennas' expected residual beside the healthy "
                                    "antennas' corrected calibrator phase rms.")
      .def_property_readonly("method",
                             [](const PathPredictionSummary& s) { return to_string(s.method); })
      .def_readonly("message", &PathPredictionSummary::message)
      .def_readonly("freq_ghz", &PathPredictionSummary::freq_ghz)
      .def_readonly("healthy_phase_rms_after_deg",
                    &PathPredictionSummary::healthy_phase_rms_after_deg)
      .def_readonly("healthy_antennas", &PathPredictionSummary::healthy_antennas)
      .def_readonly("antennas", &PathPredictionSummary::antennas);
}

void export_diagnosis_types(py::module_& m) {
  py::class_<WindowDiagnosis>(m, "WindowDiagnosis", "Verdict of one scan with its numbers.")
      .def_readonly("start_s", &WindowDiagnosis::start_s)
      .def_readonly("stop_s", &WindowDiagnosis::stop_s)
      .def_readonly("calibrator", &WindowDiagnosis::calibrator)
      .def_readonly("inherited", &WindowDiagnosis::inherited)
      .def_property_readonly("verdict",
                             [](const WindowDiagnosis& w) { return to_string(w.verdict); })
      .def_property_readonly(
          "correction_usable",
          [](const WindowDiagnosis& w) { return correction_usable(w.verdict); },
          "the correction can be used here: corrected, or a quiet sky")
      .def_readonly("reason", &WindowDiagnosis::reason)
      .def_property_readonly("antenna_faults", view_1d(&WindowDiagnosis::antenna_faults),
                             "[antenna] fault bits (0 = healthy)")
      .def_readonly("rms_before_deg", &WindowDiagnosis::rms_before_deg)
      .def_readonly("rms_after_deg", &WindowDiagnosis::rms_after_deg)
      .def_readonly("floor_deg", &WindowDiagnosis::floor_deg)
      .def_readonly("improvement_factor", &WindowDiagnosis::improvement_factor)
      .def_readonly("correlation", &WindowDiagnosis::correlation)
      .def_readonly("slope", &WindowDiagnosis::slope)
      .def_readonly("radiometer_path_rms_um", &WindowDiagnosis::radiometer_path_rms_um)
      .def_readonly("chi2_per_dof", &WindowDiagnosis::chi2_per_dof);
  py::class_<NightDiagnosis>(m, "NightDiagnosis", "Verdicts of a night per scan and antenna.")
      .def_readonly("antenna_names", &NightDiagnosis::antenna_names)
      .def_readonly("windows", &NightDiagnosis::windows)
      .def_readonly("thresholds", &NightDiagnosis::thresholds)
      .def_readonly("notes", &NightDiagnosis::notes);
  auto thresholds = py::class_<DiagnosisThresholds>(m, "DiagnosisThresholds", R"doc(
Verdict thresholds of the diagnosis (defaults as constructed; every field is writable and
named as in the thresholds TOML file, see testdata/diagnosis-thresholds.toml).
)doc");
  thresholds.def(py::init<>());
  for (const DiagnosisThresholdField& field : diagnosis_threshold_fields()) {
    const auto member = field.member;
    thresholds.def_property(
        field.name, [member](const DiagnosisThresholds& t) { return t.*member; },
        [member](DiagnosisThresholds& t, double value) { t.*member = value; }, field.meaning);
  }
  thresholds.def("validate", &DiagnosisThresholds::validate)
      .def("to_dict", [](const DiagnosisThresholds& t) {
        py::dict d;
        for (const DiagnosisThresholdField& field : diagnosis_threshold_fields())
          d[field.name] = t.*(field.member);
        return d;
      });
  m.def(
      "load_diagnosis_thresholds",
      [](const std::string& path) { return load_diagnosis_thresholds(path); }, py::arg("path"),
      "Thresholds from a TOML file of name = value lines (the rest keep their defaults).");
  m.def("describe_antenna_faults", &describe_antenna_faults, py::arg("faults"),
        "Names of the fault bits of WindowDiagnosis.antenna_faults.");
}

}  // namespace

void export_night_processing(py::module_& m) {
  export_structure_types(m);
  export_correction_types(m);
  export_diagnosis_types(m);
  py::class_<ResolvedSite>(m, "ResolvedSite", "The site a night was processed with.")
      .def_readonly("site", &ResolvedSite::site)
      .def_property_readonly("source", [](const ResolvedSite& s) { return to_string(s.source); })
      .def_readonly("description", &ResolvedSite::description);
  py::class_<NightProcessingResult>(m, "NightProcessingResult", R"doc(
Everything the night pipeline computed. Stages after last_stage are None; arrays are
read-only views owned by this object.
)doc")
      .def_property_readonly("last_stage",
                             [](const NightProcessingResult& r) { return to_string(r.last_stage); })
      .def_readonly("site", &NightProcessingResult::site)
      .def_readonly("retrieval", &NightProcessingResult::retrieval)
      .def_readonly("retrieval_reused", &NightProcessingResult::retrieval_reused)
      .def_readonly("paths", &NightProcessingResult::paths)
      .def_readonly("calibration", &NightProcessingResult::calibration)
      .def_readonly("calibration_reused", &NightProcessingResult::calibration_reused)
      .def_readonly("metrics", &NightProcessingResult::metrics)
      .def_property_readonly("obs_freq_ghz",
                             [](const NightProcessingResult& r) -> py::object {
                               if (!r.obs_freq) return py::none();
                               return py::float_(r.obs_freq->freq_ghz);
                             })
      .def_property_readonly("obs_freq_source",
                             [](const NightProcessingResult& r) -> py::object {
                               if (!r.obs_freq) return py::none();
                               return py::str(to_string(r.obs_freq->source));
                             })
      .def_readonly("corrections", &NightProcessingResult::corrections)
      .def_readonly("diagnosis", &NightProcessingResult::diagnosis)
      .def_readonly("turbulence", &NightProcessingResult::turbulence)
      .def_readonly("path_prediction", &NightProcessingResult::path_prediction,
                    "PredictedPaths when some radiometer samples were missing, else None")
      .def(
          "path_prediction_summary",
          [](const NightProcessingResult& r, std::optional<double> freq_ghz) -> py::object {
            if (!r.path_prediction || !r.metrics) return py::none();
            const double f = freq_ghz ? *freq_ghz : r.obs_freq ? r.obs_freq->freq_ghz : 0.0;
            if (!(f > 0.0))
              throw InvalidInput("freq_ghz is needed: the result has no observing frequency");
            return py::cast(
                summarize_path_prediction(*r.path_prediction, *r.metrics, r.phase_per_path, f));
          },
          py::arg("freq_ghz") = py::none(),
          "PathPredictionSummary at freq_ghz (None: the observing frequency), or None when "
          "nothing was predicted.")
      .def_readonly("result_groups", &NightProcessingResult::result_groups,
                    "Result groups computed now, for Night.with_results / writing.")
      .def_readonly("notes", &NightProcessingResult::notes)
      .def(
          "phase_per_path",
          [](const NightProcessingResult& r, double freq_ghz) {
            return r.phase_per_path.factor(freq_ghz);
          },
          py::arg("freq_ghz"), "Wet phase-per-path (dispersion) factor at freq_ghz.");
  m.def("process_night", &run, py::arg("night"), py::kw_only(), py::arg("site") = py::none(),
        py::arg("window_s") = py::none(), py::arg("fit_liquid") = false,
        py::arg("fit_temperature") = false, py::arg("per_antenna_scale") = py::none(),
        py::arg("antenna_scale_prior_sigma") = 0.1, py::arg("segment_s") = 0.0,
        py::arg("reference_antenna") = 0, py::arg("obs_freq_ghz") = py::none(),
        py::arg("thresholds") = py::none(), py::arg("advice_layer_height_m") = 1000.0,
        py::arg("advice_separation_deg") = 2.0, py::arg("advice_target_rms_deg") = 30.0,
        py::arg("last_stage") = "turbulence", py::arg("reuse_stored_results") = true,
        py::arg("threads") = 0, py::arg("path_prediction") = "frozen_flow", R"doc(
Runs the library's night pipeline (the same as skyphase process): retrieval, calibration,
correction, diagnosis and turbulence, up to last_stage, reusing stages stored in the night
when they match. site: a SiteConfig overriding the night's own (None: the night's site
record, or defaults from its weather). Retrieval options (window_s, fit_liquid,
fit_temperature) or calibration options (per_antenna_scale, segment_s, reference_antenna)
left at their defaults mean "the stored one, else the defaults" (per_antenna_scale None: one
scale per antenna when the data show it, see solve_scaling; True or False forces either). obs_freq_ghz: None = the
night's scans. thresholds: a DiagnosisThresholds (see load_diagnosis_thresholds).
path_prediction: how antennas whose radiometer gave no samples are corrected: "frozen_flow"
(falls back to neighbours without a measured wind), "neighbours" or "off". Returns a
NightProcessingResult. Raises WvrValueError for bad options or a night the stages cannot use.
The GIL is released while it runs.
)doc");
}

}  // namespace wvr::python
