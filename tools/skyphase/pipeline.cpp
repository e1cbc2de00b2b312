#include "pipeline.hpp"

#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/night_file.hpp"

namespace skyphase {

void add_common(CLI::App& cmd, CommonOptions& o) {
  cmd.add_option("night", o.night_file, "Night file (HDF5)")->required()->check(CLI::ExistingFile);
  cmd.add_option("-o,--output", o.output_file, "Night file to write with the results")->required();
  cmd.add_option("--site", o.site_file, "Site file (TOML) describing the atmosphere's shape")
      ->required()
      ->check(CLI::ExistingFile);
  cmd.add_option("--window-s", o.window_s,
                 "Coefficient window (s) when the night has no retrieval yet")
      ->capture_default_str();
  cmd.add_flag("--overwrite", o.overwrite, "Replace an existing output file");
  add_format_option(cmd, o.format);
}

void add_diagnosis_options(CLI::App& cmd, CommonOptions& o) {
  cmd.add_option("--thresholds", o.thresholds_file,
                 "Diagnosis thresholds file (TOML: name = value; defaults for names left out)")
      ->check(CLI::ExistingFile);
  cmd.add_option("--advice-layer-height-m", o.advice_layer_height_m,
                 "Turbulent layer height for fast-switching advice (m)")
      ->capture_default_str();
  cmd.add_option("--advice-separation-deg", o.advice_separation_deg,
                 "Calibrator-target separation for the advice (deg)")
      ->capture_default_str();
  cmd.add_option("--advice-target-rms-deg", o.advice_target_rms_deg,
                 "Residual phase rms the advice aims at (deg)")
      ->capture_default_str();
}

Prepared prepare(const CommonOptions& o) {
  Prepared p;
  p.night = wvr::read_night(o.night_file);
  p.site = wvr::load_site_config(o.site_file);
  if (const wvr::ResultGroup* stored = p.night.find_result("retrieval")) {
    p.retrieval = wvr::retrieval_from_result_group(*stored);
  } else {
    wvr::NightRetrievalOptions options;
    options.coefficient_window_s = o.window_s;
    p.retrieval = wvr::retrieve_night(p.night, p.site.parameters, options);
    p.new_groups.push_back(wvr::to_result_group(p.retrieval, p.night));
  }
  p.coefficients = wvr::CoefficientWindows::from_retrieval(p.retrieval);
  p.phase_per_path = wvr::site_phase_per_path(p.site.parameters);
  p.paths = wvr::compute_wvr_paths(p.night, p.coefficients);
  return p;
}

double night_obs_freq_ghz(const wvr::Night& night) {
  for (const wvr::Scan& s : night.scans) {
    if (s.obs_freq_ghz > 0.0) return s.obs_freq_ghz;
  }
  return night.calibrator_phases.freq_ghz.empty() ? 230.0
                                                  : night.calibrator_phases.freq_ghz.front();
}

StoredCalibration stored_calibration(const wvr::Night& night, const std::string& source) {
  StoredCalibration c;
  const wvr::ResultGroup* cal = night.find_result("calibration");
  if (cal == nullptr) return c;
  const auto* s = cal->find("antenna_scale");
  const auto* ss = cal->find("antenna_scale_sigma");
  const auto* a = cal->find("scale");
  const auto* as = cal->find("scale_sigma");
  if (s == nullptr || ss == nullptr || a == nullptr || as == nullptr ||
      s->element_count() != night.antenna_count()) {
    throw wvr::InvalidInput(source + ": /results/calibration is incomplete");
  }
  c.present = true;
  c.antenna_scale = std::get<std::vector<double>>(s->values);
  c.antenna_scale_sigma = std::get<std::vector<double>>(ss->values);
  c.scale = std::get<std::vector<double>>(a->values).at(0);
  c.scale_sigma = std::get<std::vector<double>>(as->values).at(0);
  return c;
}

}  // namespace skyphase
