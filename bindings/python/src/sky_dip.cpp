// Sky dips from Python: simulate elevation scans of radiometers and fit them with the layered
// model and the single-slab form (wvr/sky_dip.hpp).
#include "wvr/sky_dip.hpp"

#include <pybind11/stl.h>

#include "arrays.hpp"
#include "common.hpp"

namespace wvr::python {
namespace {

py::dict dip_to_dict(const SkyDip& dip) {
  py::dict d;
  d["antenna"] = dip.antenna;
  d["time_s"] = read_only_array(dip.time_s);
  d["elevation_deg"] = read_only_array(dip.elevation_deg);
  std::vector<double> flat;
  for (const auto& row : dip.brightness_k) flat.insert(flat.end(), row.begin(), row.end());
  const auto channels =
      static_cast<py::ssize_t>(dip.brightness_k.empty() ? 0 : dip.brightness_k[0].size());
  d["brightness_k"] =
      read_only_array(flat).reshape({static_cast<py::ssize_t>(dip.brightness_k.size()), channels});
  return d;
}

std::vector<double> optional_doubles(const py::handle& object, const std::string& field) {
  if (object.is_none()) return {};
  return doubles_of_shape(object, field, {-1}, "(channel,)");
}

py::list simulate(const AtmosphereProfile& profile,
                  const RadiometerConfig& radiometer,
                  const py::list& units,
                  const py::handle& elevation_deg,
                  double dwell_s,
                  double sample_interval_s,
                  const std::string& absorption_model,
                  bool noise,
                  std::uint64_t seed) {
  std::vector<SkyDipUnit> cpp_units;
  for (std::size_t u = 0; u < units.size(); ++u) {
    const std::string field = "units[" + std::to_string(u) + "]";
    const py::dict unit = units[u].cast<py::dict>();
    SkyDipUnit cu;
    cu.antenna = unit.contains("antenna") ? text_of(unit["antenna"], field + ".antenna")
                                          : "unit" + std::to_string(u);
    if (unit.contains("offset_k"))
      cu.offset_k = optional_doubles(unit["offset_k"], field + ".offset_k");
    if (unit.contains("gain")) cu.gain = optional_doubles(unit["gain"], field + ".gain");
    cpp_units.push_back(std::move(cu));
  }
  SkyDipSimulationOptions options;
  if (!elevation_deg.is_none())
    options.elevation_deg = doubles_of_shape(elevation_deg, "elevation_deg", {-1}, "(elevation,)");
  options.dwell_s = dwell_s;
  options.sample_interval_s = sample_interval_s;
  options.absorption_model = absorption_model;
  options.add_noise = noise;
  options.seed = seed;
  std::vector<SkyDip> dips;
  {
    py::gil_scoped_release release;
    dips = simulate_sky_dips(profile, radiometer, cpp_units, options);
  }
  py::list out;
  for (const SkyDip& dip : dips) out.append(dip_to_dict(dip));
  return out;
}

py::dict fit(const AtmosphereProfile& profile,
             const RadiometerConfig& radiometer,
             const py::handle& elevation_deg,
             const py::handle& brightness_k,
             const std::string& antenna,
             const py::handle& time_s,
             const std::string& absorption_model,
             double gain_prior_sigma,
             double slab_temperature_prior_sigma_k,
             double slab_tolerance) {
  SkyDip dip;
  dip.antenna = antenna;
  dip.elevation_deg = doubles_of_shape(elevation_deg, "elevation_deg", {-1}, "(sample,)");
  const auto n = static_cast<py::ssize_t>(dip.elevation_deg.size());
  const auto channels = static_cast<py::ssize_t>(radiometer.channels.size());
  const std::vector<double> flat =
      doubles_of_shape(brightness_k, "brightness_k", {n, channels}, "(sample, channel)");
  for (py::ssize_t i = 0; i < n; ++i)
    dip.brightness_k.emplace_back(flat.begin() + i * channels, flat.begin() + (i + 1) * channels);
  if (!time_s.is_none()) dip.time_s = doubles_of_shape(time_s, "time_s", {n}, "(sample,)");
  SkyDipFitOptions options;
  options.absorption_model = absorption_model;
  options.gain_prior_sigma = gain_prior_sigma;
  options.slab_temperature_prior_sigma_k = slab_temperature_prior_sigma_k;
  options.slab_agreement_tolerance = slab_tolerance;
  SkyDipFit f;
  {
    py::gil_scoped_release release;
    f = fit_sky_dip(dip, profile, radiometer, options);
  }
  py::dict d;
  d["antenna"] = f.antenna;
  d["model"] = f.model;
  d["pwv_mm"] = f.pwv_mm;
  d["pwv_sigma_mm"] = f.pwv_sigma_mm;
  d["reduced_chi_square"] = f.reduced_chi_square;
  d["rms_k"] = f.rms_k;
  d["samples"] = f.samples;
  d["elevations"] = f.elevations;
  d["converged"] = f.converged;
  d["airmass_model"] = f.airmass_model;
  d["notes"] = f.notes;
  std::vector<std::string> names, notes;
  for (const SkyDipChannelFit& c : f.channels) {
    names.push_back(c.channel);
    notes.push_back(c.note);
  }
  d["channel_names"] = names;
  d["channel_notes"] = notes;
  auto column = [&](double SkyDipChannelFit::*field) {
    std::vector<double> values;
    for (const SkyDipChannelFit& c : f.channels) values.push_back(c.*field);
    return read_only_array(values);
  };
  d["offset_k"] = column(&SkyDipChannelFit::offset_k);
  d["offset_sigma_k"] = column(&SkyDipChannelFit::offset_sigma_k);
  d["gain"] = column(&SkyDipChannelFit::gain);
  d["gain_sigma"] = column(&SkyDipChannelFit::gain_sigma);
  d["gain_data_share"] = column(&SkyDipChannelFit::gain_data_share);
  d["zenith_opacity_np"] = column(&SkyDipChannelFit::zenith_opacity_np);
  d["zenith_opacity_sigma_np"] = column(&SkyDipChannelFit::zenith_opacity_sigma_np);
  d["effective_temperature_k"] = column(&SkyDipChannelFit::effective_temperature_k);
  d["effective_rj_temperature_k"] = column(&SkyDipChannelFit::effective_rj_temperature_k);
  d["slab_opacity_np"] = column(&SkyDipChannelFit::slab_opacity_np);
  d["slab_opacity_sigma_np"] = column(&SkyDipChannelFit::slab_opacity_sigma_np);
  d["slab_temperature_k"] = column(&SkyDipChannelFit::slab_temperature_k);
  d["slab_temperature_sigma_k"] = column(&SkyDipChannelFit::slab_temperature_sigma_k);
  d["slab_temperature_data_share"] = column(&SkyDipChannelFit::slab_temperature_data_share);
  d["slab_offset_k"] = column(&SkyDipChannelFit::slab_offset_k);
  d["slab_offset_sigma_k"] = column(&SkyDipChannelFit::slab_offset_sigma_k);
  d["slab_rms_k"] = column(&SkyDipChannelFit::slab_rms_k);
  d["slab_opacity_difference"] = column(&SkyDipChannelFit::slab_opacity_difference);
  return d;
}

}  // namespace

void export_sky_dip(py::module_& m) {
  const SkyDipSimulationOptions sim;
  const SkyDipFitOptions fit_defaults;
  m.def("simulate_sky_dips", &simulate, py::arg("profile"), py::arg("radiometer"), py::arg("units"),
        py::kw_only(), py::arg("elevation_deg") = py::none(), py::arg("dwell_s") = sim.dwell_s,
        py::arg("sample_interval_s") = sim.sample_interval_s,
        py::arg("absorption_model") = sim.absorption_model, py::arg("noise") = true,
        py::arg("seed") = sim.seed, R"doc(
Simulated sky dips through `profile`: for each unit (a dict with antenna, offset_k and gain, each
calibration value one number per channel or one for all) an elevation scan (default 90 -> 20 deg
in 7 steps, dwell_s at each, one sample per sample_interval_s) of brightness
offset + gain x sky brightness + thermal noise (the channels' noise_k). Returns a list of dicts
(antenna, time_s, elevation_deg, brightness_k [sample, channel]) that fit_sky_dip takes as
keyword arguments. Raises WvrValueError naming the bad field.
)doc");
  m.def("fit_sky_dip", &fit, py::arg("profile"), py::arg("radiometer"), py::arg("elevation_deg"),
        py::arg("brightness_k"), py::kw_only(), py::arg("antenna") = "",
        py::arg("time_s") = py::none(), py::arg("absorption_model") = fit_defaults.absorption_model,
        py::arg("gain_prior_sigma") = fit_defaults.gain_prior_sigma,
        py::arg("slab_temperature_prior_sigma_k") = fit_defaults.slab_temperature_prior_sigma_k,
        py::arg("slab_tolerance") = fit_defaults.slab_agreement_tolerance, R"doc(
Fits one sky dip (brightness_k [sample, channel] at elevation_deg [sample]): the layered model
(PWV shared, offset and gain per channel, gains with a prior 1 +/- gain_prior_sigma) giving zenith
opacity and effective temperature per channel, and per channel the single-slab form
T_atm (1 - exp(-tau A)) + offset with the plane-parallel airmass A = 1/sin(el), its opacity
compared with the layered fit's (slab_opacity_difference; noted above slab_tolerance). The
profile gives the site's temperature and vapour shape. Returns a dict of per-channel arrays and
notes saying what priors set and where the slab disagrees. Raises WvrValueError for fewer than 3
elevations, NaN or elevations outside the model's range.
)doc");
}

}  // namespace wvr::python
