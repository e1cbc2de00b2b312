// Site description files and profiles built from them.
#include "wvr/site_config.hpp"

#include <pybind11/stl.h>
#include <pybind11/stl/filesystem.h>

#include <sstream>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

py::dict site_to_dict(const SiteConfig& s) {
  const SiteParameters& p = s.parameters;
  py::dict out;
  out["name"] = s.name;
  out["latitude_deg"] = s.latitude_deg;
  out["altitude_m"] = p.altitude_m;
  out["surface_temperature_k"] = p.surface_temperature_k;
  out["surface_pressure_hpa"] = p.surface_pressure_hpa;
  out["lapse_rate_k_per_km"] = p.lapse_rate_k_per_km;
  out["tropopause_m"] = p.tropopause_m;
  out["water_scale_height_m"] = p.water_scale_height_m;
  out["pwv_mm"] = p.pwv_mm;
  out["surface_relative_humidity_pct"] = p.surface_relative_humidity_pct;
  out["inversion"] = inversion_to_object(p.inversion);
  return out;
}

template <typename T>
auto parameter(T SiteParameters::*field) {
  return [field](const SiteConfig& s) { return s.parameters.*field; };
}

}  // namespace

void export_site_config(py::module_& m) {
  py::class_<SiteConfig>(m, "SiteConfig", R"doc(
A site read from a TOML description: name, latitude_deg and the parameters of
wvr.parametric_profile (same names and units). Build its profile with wvr.profile_from_site.
)doc")
      .def_readonly("name", &SiteConfig::name)
      .def_readonly("latitude_deg", &SiteConfig::latitude_deg, "Geodetic latitude (deg).")
      .def_property_readonly("altitude_m", parameter(&SiteParameters::altitude_m),
                             "Ground altitude above mean sea level (m).")
      .def_property_readonly("surface_temperature_k",
                             parameter(&SiteParameters::surface_temperature_k),
                             "Air temperature at the ground (K).")
      .def_property_readonly("surface_pressure_hpa",
                             parameter(&SiteParameters::surface_pressure_hpa),
                             "Air pressure at the ground (hPa).")
      .def_property_readonly("lapse_rate_k_per_km", parameter(&SiteParameters::lapse_rate_k_per_km),
                             "Tropospheric temperature decrease with height (K/km).")
      .def_property_readonly("tropopause_m", parameter(&SiteParameters::tropopause_m),
                             "Tropopause height above mean sea level (m).")
      .def_property_readonly("water_scale_height_m",
                             parameter(&SiteParameters::water_scale_height_m),
                             "Exponential scale height of water-vapour density (m).")
      .def_property_readonly("pwv_mm", parameter(&SiteParameters::pwv_mm),
                             "Precipitable water vapour (mm), or None.")
      .def_property_readonly("surface_relative_humidity_pct",
                             parameter(&SiteParameters::surface_relative_humidity_pct),
                             "Relative humidity at the ground (%), or None.")
      .def_property_readonly(
          "inversion",
          [](const SiteConfig& s) { return inversion_to_object(s.parameters.inversion); },
          "None or a dict with base_above_ground_m (m), depth_m (m), temperature_jump_k (K).")
      .def("to_dict", &site_to_dict, "Every field as a dict (units in the key names).")
      .def("__repr__", [](const SiteConfig& s) {
        std::ostringstream out;
        out << "SiteConfig(name='" << s.name << "', altitude_m=" << s.parameters.altitude_m
            << ", latitude_deg=" << s.latitude_deg << ")";
        return out.str();
      });

  m.def("load_site", &load_site_config, py::arg("path"), R"doc(
Reads and validates a site TOML file (str or path-like). Raises WvrValueError naming the file
and the field on any problem, including an unreadable file.
)doc");
  m.def("parse_site", &parse_site_config, py::arg("toml_text"), py::arg("source_name") = "<string>",
        R"doc(
Parses and validates a site description from TOML text; source_name labels error messages.
)doc");
  m.def(
      "profile_from_site",
      [](const SiteConfig& site, std::optional<double> pwv_mm, int layer_count,
         double top_altitude_m) {
        SiteParameters parameters = site.parameters;
        if (pwv_mm) {
          parameters.pwv_mm = pwv_mm;
          parameters.surface_relative_humidity_pct.reset();
        }
        LayerGrid grid;
        grid.layer_count = layer_count;
        grid.top_altitude_m = top_altitude_m;
        grid.validate();
        py::gil_scoped_release release;
        return make_parametric_profile(parameters, grid);
      },
      py::arg("site"), py::kw_only(), py::arg("pwv_mm") = py::none(), py::arg("layer_count") = 48,
      py::arg("top_altitude_m") = 40000.0, R"doc(
Parametric profile of a site (see wvr.parametric_profile). pwv_mm (mm), when given, replaces
the site's humidity (its pwv_mm or surface_relative_humidity_pct).
)doc");
}

}  // namespace wvr::python
