// Single stages of the phase correction from Python, on a retrieval the caller holds:
// radiometer paths, the scaling solve and the corrections with their metrics, as typed results
// (wvr.process_night runs them all).
#include "wvr/correction.hpp"

#include <pybind11/stl.h>

#include <optional>
#include <tuple>

#include "arrays.hpp"
#include "common.hpp"
#include "wvr/calibration.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/night_site.hpp"
#include "wvr/observing_frequency.hpp"
#include "wvr/site_config.hpp"

namespace wvr::python {
namespace {

void require_same_night(const Night& night, const NightRetrieval& retrieval) {
  if (retrieval.antennas != night.antenna_count() || retrieval.channels != night.channel_count() ||
      retrieval.samples != night.time_count()) {
    throw InvalidInput("retrieval has " + std::to_string(retrieval.antennas) + " antennas x " +
                       std::to_string(retrieval.samples) + " samples x " +
                       std::to_string(retrieval.channels) + " channels, the night " +
                       std::to_string(night.antenna_count()) + " x " +
                       std::to_string(night.time_count()) + " x " +
                       std::to_string(night.channel_count()) + " (a retrieval of another night)");
  }
}

AntennaPaths paths_of(const Night& night, const NightRetrieval& retrieval) {
  require_same_night(night, retrieval);
  py::gil_scoped_release release;
  return compute_wvr_paths(night, CoefficientWindows::from_retrieval(retrieval));
}

PhasePerPath phase_per_path_of(const Night& night, const std::optional<SiteConfig>& site) {
  return site_phase_per_path(resolve_night_site(night, site).site.parameters);
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

CalibrationResult solve(const Night& night,
                        const NightRetrieval& retrieval,
                        const std::optional<SiteConfig>& site,
                        std::optional<bool> per_antenna_scale,
                        double antenna_scale_prior_sigma,
                        double segment_s,
                        int reference_antenna) {
  CalibrationOptions options;
  options.antenna_scaling = antenna_scaling_of(per_antenna_scale);
  options.antenna_scale_prior_sigma = antenna_scale_prior_sigma;
  options.segment_s = segment_s;
  options.reference_antenna = reference_antenna;
  options.validate();
  const AntennaPaths paths = paths_of(night, retrieval);
  const PhasePerPath factor = phase_per_path_of(night, site);
  py::gil_scoped_release release;
  return solve_scaling(night, paths, factor, options);
}

std::tuple<PhaseCorrections, CorrectionMetrics> correct(const Night& night,
                                                        const NightRetrieval& retrieval,
                                                        const std::optional<SiteConfig>& site,
                                                        const py::object& antenna_scale,
                                                        std::optional<double> obs_freq_ghz) {
  const std::vector<double> scale = antenna_scale_of(antenna_scale, night.antenna_count());
  const double freq = night_observing_frequency(night, obs_freq_ghz).freq_ghz;
  require_same_night(night, retrieval);
  const PhasePerPath factor = phase_per_path_of(night, site);
  py::gil_scoped_release release;
  const CoefficientWindows coefficients = CoefficientWindows::from_retrieval(retrieval);
  PhaseCorrections c = compute_phase_corrections(night, coefficients, scale, freq, factor(freq));
  CorrectionMetrics m =
      evaluate_correction(night, compute_wvr_paths(night, coefficients), scale, factor);
  return {std::move(c), std::move(m)};
}

}  // namespace

void export_correction(py::module_& m) {
  m.def("radiometer_paths", &paths_of, py::arg("night"), py::arg("retrieval"), R"doc(
Wet path of every antenna from its radiometer, through the same corrector as real time: an
AntennaPaths with time_s [time], path_mm [antenna, time] (NaN where unusable) and flags
[antenna, time] (0 = usable). Raises WvrValueError when the retrieval belongs to another night.
)doc");
  m.def("solve_scaling", &solve, py::arg("night"), py::arg("retrieval"),
        py::arg("site") = py::none(), py::kw_only(), py::arg("per_antenna_scale") = py::none(),
        py::arg("antenna_scale_prior_sigma") = 0.1, py::arg("segment_s") = 0.0,
        py::arg("reference_antenna") = 0, R"doc(
Solves the scale between radiometer path and calibrator phase (the site, by default the
night's own, gives the dispersion of the wet refractivity). per_antenna_scale: None (the
default) fits one scale for the array and one per antenna and keeps the per-antenna scales when
a BIC test on the calibrator residuals finds them significant (the result's
antenna_scale_statistic against antenna_scale_threshold); True or False forces either.
Returns a CalibrationResult.
)doc");
  m.def("correct_night", &correct, py::arg("night"), py::arg("retrieval"),
        py::arg("site") = py::none(), py::kw_only(), py::arg("antenna_scale") = py::none(),
        py::arg("obs_freq_ghz") = py::none(), R"doc(
Phase corrections of every antenna at the observing frequency (default: the night's scans';
a night with none raises WvrValueError). antenna_scale: None (1), one number, or one per
antenna (e.g. solve_scaling(...).antenna_scale). Returns (PhaseCorrections,
CorrectionMetrics): phase_correction_rad [antenna, time] is added to the antenna's phase.
)doc");
}

}  // namespace wvr::python
