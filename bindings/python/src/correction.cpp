// Phase correction of a night from Python: radiometer paths, the scaling solve against the
// calibrator phases, and the per-antenna corrections with their metrics. Results are dicts of
// read-only numpy arrays (antenna-major [antenna, time] like the night's own arrays).
#include "wvr/correction.hpp"

#include <pybind11/stl.h>

#include <functional>
#include <optional>

#include "arrays.hpp"
#include "common.hpp"
#include "wvr/calibration.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/site_config.hpp"

namespace wvr::python {
namespace {

template <typename T>
py::array owned(std::vector<T> values, const std::vector<py::ssize_t>& shape) {
  auto* heap = new std::vector<T>(std::move(values));
  py::capsule free_when_done(heap, [](void* p) { delete static_cast<std::vector<T>*>(p); });
  return read_only_view(heap->data(), shape, free_when_done);
}

AntennaPaths paths_of(const Night& night, const NightRetrieval& retrieval) {
  if (retrieval.antennas != night.antenna_count() || retrieval.channels != night.channel_count()) {
    throw InvalidInput("retrieval has " + std::to_string(retrieval.antennas) + " antennas x " +
                       std::to_string(retrieval.channels) + " channels, the night " +
                       std::to_string(night.antenna_count()) + " x " +
                       std::to_string(night.channel_count()));
  }
  py::gil_scoped_release release;
  return compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
}

py::dict paths_dict(AntennaPaths paths) {
  const auto na = static_cast<py::ssize_t>(paths.antennas);
  const auto nt = static_cast<py::ssize_t>(paths.time_s.size());
  py::dict d;
  d["time_s"] = owned(std::move(paths.time_s), {nt});
  d["path_mm"] = owned(std::move(paths.path_mm), {na, nt});
  d["flags"] = owned(std::move(paths.flags), {na, nt});
  return d;
}

std::vector<double> antenna_scale_of(const py::object& scale, std::size_t antennas) {
  if (scale.is_none()) return std::vector<double>(antennas, 1.0);
  std::vector<double> s = as_vector(scale, "antenna_scale");
  if (s.size() == 1) s.assign(antennas, s.front());
  if (s.size() != antennas) {
    throw InvalidInput("antenna_scale has " + std::to_string(s.size()) + " values for " +
                       std::to_string(antennas) + " antennas");
  }
  for (std::size_t a = 0; a < s.size(); ++a) {
    if (!(s[a] > 0.0) || !std::isfinite(s[a]))
      throw InvalidInput(describe_value("antenna_scale[" + std::to_string(a) + "]", s[a]) +
                         " must be finite and > 0");
  }
  return s;
}

py::dict solve(const Night& night,
               const NightRetrieval& retrieval,
               const SiteConfig& site,
               bool per_antenna_scale,
               double antenna_scale_prior_sigma,
               double segment_s,
               int reference_antenna) {
  CalibrationOptions options;
  options.per_antenna_scale = per_antenna_scale;
  options.antenna_scale_prior_sigma = antenna_scale_prior_sigma;
  options.segment_s = segment_s;
  options.reference_antenna = reference_antenna;
  options.validate();
  const AntennaPaths paths = paths_of(night, retrieval);
  const auto factor = site_phase_per_path(site.parameters);
  CalibrationResult r;
  {
    py::gil_scoped_release release;
    r = solve_scaling(night, paths, factor, options);
  }
  py::dict d;
  d["status"] = std::string(to_string(r.status));
  d["ok"] = r.ok();
  d["message"] = r.message;
  d["scale"] = r.scale;
  d["scale_sigma"] = r.scale_sigma;
  d["antenna_scale"] = read_only_array(r.antenna_scale);
  d["antenna_scale_sigma"] = read_only_array(r.antenna_scale_sigma);
  d["segment_start_s"] = read_only_array(r.segment_start_s);
  d["segment_scale"] = read_only_array(r.segment_scale);
  d["segment_scale_sigma"] = read_only_array(r.segment_scale_sigma);
  d["rows_used"] = r.rows_used;
  d["rows_skipped"] = r.rows_skipped;
  d["report"] = r.brief_report();
  return d;
}

py::dict correct(const Night& night,
                 const NightRetrieval& retrieval,
                 const SiteConfig& site,
                 const py::object& antenna_scale,
                 std::optional<double> obs_freq_ghz) {
  const std::size_t na = night.antenna_count();
  const std::vector<double> scale = antenna_scale_of(antenna_scale, na);
  double freq = 0.0;
  if (obs_freq_ghz) {
    freq = *obs_freq_ghz;
  } else {
    for (const Scan& s : night.scans)
      if (freq == 0.0 && s.obs_freq_ghz > 0.0) freq = s.obs_freq_ghz;
    if (freq == 0.0)
      throw InvalidInput("obs_freq_ghz is needed: the night's scans give no observing frequency");
  }
  require_in_range("obs_freq_ghz", freq, 1.0, 2000.0, "GHz");
  if (retrieval.antennas != na || retrieval.channels != night.channel_count()) {
    paths_of(night, retrieval);  // throws the mismatch
  }
  const auto factor = site_phase_per_path(site.parameters);
  PhaseCorrections c;
  CorrectionMetrics m;
  {
    py::gil_scoped_release release;
    const CoefficientWindows coefficients = CoefficientWindows::from_retrieval(retrieval);
    c = compute_phase_corrections(night, coefficients, scale, freq, factor(freq));
    m = evaluate_correction(night, compute_wvr_paths(night, coefficients), scale, factor);
  }
  const auto nt = static_cast<py::ssize_t>(c.time_s.size());
  const auto a = static_cast<py::ssize_t>(na);
  py::dict d;
  d["obs_freq_ghz"] = c.obs_freq_ghz;
  d["phase_per_path"] = c.phase_per_path;
  d["antenna_scale"] = read_only_array(c.antenna_scale);
  d["time_s"] = owned(std::move(c.time_s), {nt});
  d["phase_correction_rad"] = owned(std::move(c.phase_correction_rad), {a, nt});
  d["path_mm"] = owned(std::move(c.path_mm), {a, nt});
  d["flags"] = owned(std::move(c.flags), {a, nt});
  py::dict metrics;
  metrics["phase_rms_before_deg"] = m.phase_rms_before_deg;
  metrics["phase_rms_after_deg"] = m.phase_rms_after_deg;
  metrics["coherence_before"] = m.coherence_before;
  metrics["coherence_after"] = m.coherence_after;
  metrics["improvement_factor"] = m.improvement_factor;
  std::vector<double> before(na), after(na);
  for (std::size_t k = 0; k < na && k < m.antennas.size(); ++k) {
    before[k] = m.antennas[k].rms_before_deg;
    after[k] = m.antennas[k].rms_after_deg;
  }
  metrics["antenna_phase_rms_before_deg"] = read_only_array(before);
  metrics["antenna_phase_rms_after_deg"] = read_only_array(after);
  d["metrics"] = metrics;
  d["corrected_calibrator_phase_rad"] = read_only_array(m.corrected_phase_rad);
  return d;
}

}  // namespace

void export_correction(py::module_& m) {
  m.def(
      "radiometer_paths",
      [](const Night& night, const NightRetrieval& retrieval) {
        return paths_dict(paths_of(night, retrieval));
      },
      py::arg("night"), py::arg("retrieval"), R"doc(
Wet path of every antenna from its radiometer, through the same corrector as real time: a dict
with time_s [time], path_mm [antenna, time] (NaN where unusable) and flags [antenna, time]
(0 = usable). Raises WvrValueError when the retrieval does not belong to the night.
)doc");
  m.def("solve_scaling", &solve, py::arg("night"), py::arg("retrieval"), py::arg("site"),
        py::kw_only(), py::arg("per_antenna_scale") = false,
        py::arg("antenna_scale_prior_sigma") = 0.1, py::arg("segment_s") = 0.0,
        py::arg("reference_antenna") = 0, R"doc(
Solves the scale between radiometer path and calibrator phase (the site gives the dispersion
of the wet refractivity). Returns a dict: status, ok, message, scale, scale_sigma,
antenna_scale and antenna_scale_sigma [antenna], segment_* (when segment_s > 0), rows_used,
rows_skipped, report.
)doc");
  m.def("correct_night", &correct, py::arg("night"), py::arg("retrieval"), py::arg("site"),
        py::kw_only(), py::arg("antenna_scale") = py::none(), py::arg("obs_freq_ghz") = py::none(),
        R"doc(
Phase corrections of every antenna at the observing frequency (default: the night's scans').
antenna_scale: None (1), one number, or one per antenna (e.g. solve_scaling's). Returns a
dict: obs_freq_ghz, phase_per_path, antenna_scale, time_s [time], phase_correction_rad
[antenna, time] (to be added to the antenna's phase: -(2 pi nu / c) phase_per_path scale
path; 0 where flagged), path_mm and flags [antenna, time], metrics (calibrator phase rms and coherence before and
after, per antenna too) and corrected_calibrator_phase_rad [calibrator row].
)doc");
}

}  // namespace wvr::python
