// Radiometer cross-calibration from Python: offsets and gains of every unit relative to the
// array, the units that disagree or drift, and optionally the night with the solution applied.
#include "wvr/radiometer_cross_calibration.hpp"

#include <pybind11/stl.h>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

py::array_t<double> matrix(const CrossCalibration& x, double ChannelCalibration::*field) {
  std::vector<double> values;
  for (const UnitCalibration& u : x.units)
    for (const ChannelCalibration& c : u.channels) values.push_back(c.*field);
  py::array_t<double> out = read_only_array(values);
  return out.reshape({static_cast<py::ssize_t>(x.antennas), static_cast<py::ssize_t>(x.channels)});
}

py::dict cross_calibrate_night(const Night& night,
                               double block_s,
                               double offset_limit_k,
                               double gain_limit,
                               double min_drift_k,
                               bool apply,
                               bool include_drift,
                               bool at_mean_sky) {
  if (include_drift && at_mean_sky)
    throw InvalidInput("include_drift = true and at_mean_sky = true: choose one way to apply");
  CrossCalibrationOptions options;
  options.block_s = block_s;
  options.offset_limit_k = offset_limit_k;
  options.gain_limit = gain_limit;
  options.min_drift_k = min_drift_k;
  CrossCalibration x;
  std::optional<Night> corrected;
  {
    py::gil_scoped_release release;
    x = cross_calibrate(night, options);
    if (apply) {
      corrected = at_mean_sky ? apply_cross_calibration_at_mean_sky(night, x)
                              : apply_cross_calibration(night, x, include_drift);
    }
  }
  py::dict d;
  d["reference"] = "relative to the array: mean offset 0 K, mean gain 1 per channel";
  d["channel_names"] = x.channel_names;
  d["offset_k"] = matrix(x, &ChannelCalibration::offset_k);
  d["offset_sigma_k"] = matrix(x, &ChannelCalibration::offset_sigma_k);
  d["gain"] = matrix(x, &ChannelCalibration::gain);
  d["gain_sigma"] = matrix(x, &ChannelCalibration::gain_sigma);
  d["offset_drift_k_per_h"] = matrix(x, &ChannelCalibration::offset_drift_k_per_h);
  d["gain_drift_per_h"] = matrix(x, &ChannelCalibration::gain_drift_per_h);
  d["drift_chi2"] = matrix(x, &ChannelCalibration::drift_chi2);
  d["drift_change_k"] = matrix(x, &ChannelCalibration::drift_change_k);
  std::vector<bool> disagrees, drifting;
  std::vector<std::string> verdicts;
  for (const UnitCalibration& u : x.units) {
    disagrees.push_back(u.disagrees);
    drifting.push_back(u.drifting);
    verdicts.push_back(u.verdict);
  }
  d["disagrees"] = disagrees;
  d["drifting"] = drifting;
  d["verdicts"] = verdicts;
  d["flagged_units"] = x.flagged_units();
  d["block_mid_s"] = read_only_array(x.block_mid_s);
  d["report"] = x.brief_report();
  d["result_group"] = cross_calibration_result_group(x);
  if (corrected) d["night"] = std::move(*corrected);
  return d;
}

}  // namespace

void export_radiometer_cross_calibration(py::module_& m) {
  const CrossCalibrationOptions defaults;
  m.def("cross_calibrate", &cross_calibrate_night, py::arg("night"), py::kw_only(),
        py::arg("block_s") = defaults.block_s, py::arg("offset_limit_k") = defaults.offset_limit_k,
        py::arg("gain_limit") = defaults.gain_limit, py::arg("min_drift_k") = defaults.min_drift_k,
        py::arg("apply") = false, py::arg("include_drift") = false, py::arg("at_mean_sky") = false,
        R"doc(
Calibrates the night's radiometers against each other from block medians (block_s seconds):
per unit and channel an offset (K) and a gain RELATIVE TO THE ARRAY (mean offset 0, mean gain 1
over the units that do not drift), with 1-sigma uncertainties (a block jackknife over the
night: the block residuals are correlated in time) and a linear drift. Returns a dict:
offset_k, offset_sigma_k, gain, gain_sigma, offset_drift_k_per_h, gain_drift_per_h,
drift_chi2, drift_change_k [antenna, channel]; disagrees, drifting, verdicts [antenna];
flagged_units (names), block_mid_s, report, result_group (for add_result_group) and, with
apply=True, night: a copy with T' = (T - offset) / gain (drifting units' drift too with
include_drift=True), or with at_mean_sky=True a copy with T' = T - (offset + (gain - 1) x the
array's mean sky) (well determined where the sky changes too little to separate offset and
gain). Raises WvrValueError for bad options, include_drift and at_mean_sky together, or a night
with fewer than 3 antennas or 3 blocks.
)doc");
}

}  // namespace wvr::python
