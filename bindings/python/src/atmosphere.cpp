// AtmosphereProfile and the parametric profile builder.
#include <pybind11/stl.h>

#include <cmath>
#include <sstream>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

using Getter = double AtmosphereLayer::*;

py::array_t<double> layer_column(const AtmosphereProfile& profile, Getter field) {
  std::vector<double> values;
  values.reserve(profile.size());
  for (const AtmosphereLayer& l : profile.layers()) values.push_back(l.*field);
  return read_only_array(values);
}

AtmosphereProfile profile_from_arrays(const py::handle& base_m,
                                      const py::handle& top_m,
                                      const py::handle& pressure_hpa,
                                      const py::handle& temperature_k,
                                      const py::handle& vapour_density_kg_m3,
                                      const py::handle& liquid_density_kg_m3) {
  const std::vector<double> base = as_vector(base_m, "base_m");
  const std::vector<double> top = as_vector(top_m, "top_m");
  const std::vector<double> pressure = as_vector(pressure_hpa, "pressure_hpa");
  const std::vector<double> temperature = as_vector(temperature_k, "temperature_k");
  const std::vector<double> vapour = as_vector(vapour_density_kg_m3, "vapour_density_kg_m3");
  const std::vector<double> liquid = liquid_density_kg_m3.is_none()
                                         ? std::vector<double>(base.size(), 0.0)
                                         : as_vector(liquid_density_kg_m3, "liquid_density_kg_m3");
  auto check_length = [&](const std::vector<double>& values, const char* field) {
    if (values.size() != base.size()) {
      throw InvalidInput(std::string(field) + " has " + std::to_string(values.size()) +
                         " values but base_m has " + std::to_string(base.size()));
    }
  };
  check_length(top, "top_m");
  check_length(pressure, "pressure_hpa");
  check_length(temperature, "temperature_k");
  check_length(vapour, "vapour_density_kg_m3");
  check_length(liquid, "liquid_density_kg_m3");
  std::vector<AtmosphereLayer> layers(base.size());
  for (std::size_t i = 0; i < layers.size(); ++i) {
    layers[i] = {base[i], top[i], pressure[i], temperature[i], vapour[i], liquid[i]};
  }
  return AtmosphereProfile(std::move(layers));
}

std::string describe(const AtmosphereProfile& p) {
  std::ostringstream out;
  out.precision(6);
  out << "AtmosphereProfile(" << p.size() << " layers, " << p.ground_altitude_m() << "-"
      << p.top_altitude_m() << " m, pwv_mm=" << p.pwv_mm()
      << ", liquid_water_path_kg_m2=" << p.liquid_water_path_kg_m2() << ")";
  return out.str();
}

}  // namespace

std::optional<Inversion> inversion_from_object(const py::handle& object) {
  if (object.is_none()) return std::nullopt;
  Inversion inversion;
  if (py::isinstance<py::dict>(object)) {
    bool base = false, depth = false, jump = false;
    for (auto [key, value] : py::reinterpret_borrow<py::dict>(object)) {
      const std::string name = py::str(key);
      double* target = nullptr;
      if (name == "base_above_ground_m") {
        target = &inversion.base_above_ground_m;
        base = true;
      } else if (name == "depth_m") {
        target = &inversion.depth_m;
        depth = true;
      } else if (name == "temperature_jump_k") {
        target = &inversion.temperature_jump_k;
        jump = true;
      } else {
        throw InvalidInput("inversion: unknown key '" + name +
                           "' (expected base_above_ground_m, depth_m, temperature_jump_k)");
      }
      if (!py::isinstance<py::float_>(value) && !py::isinstance<py::int_>(value)) {
        throw InvalidInput("inversion." + name + " is not a number");
      }
      *target = value.cast<double>();
    }
    if (!(base && depth && jump)) {
      throw InvalidInput(
          "inversion: base_above_ground_m, depth_m and temperature_jump_k are all required");
    }
    return inversion;
  }
  const std::vector<double> values = as_vector(object, "inversion");
  if (values.size() != 3) {
    throw InvalidInput("inversion has " + std::to_string(values.size()) +
                       " values; expected (base_above_ground_m, depth_m, temperature_jump_k)");
  }
  return Inversion{values[0], values[1], values[2]};
}

py::object inversion_to_object(const std::optional<Inversion>& inversion) {
  if (!inversion) return py::none();
  py::dict out;
  out["base_above_ground_m"] = inversion->base_above_ground_m;
  out["depth_m"] = inversion->depth_m;
  out["temperature_jump_k"] = inversion->temperature_jump_k;
  return out;
}

void export_atmosphere(py::module_& m) {
  py::class_<AtmosphereProfile>(m, "AtmosphereProfile", R"doc(
Layered atmosphere, ordered upward from the antenna. Heights are above mean sea level (m);
each layer's state is taken at mid-height. Immutable: the array properties are read-only
copies, and the modifying methods return new profiles.
)doc")
      .def(py::init(&profile_from_arrays), py::arg("base_m"), py::arg("top_m"),
           py::arg("pressure_hpa"), py::arg("temperature_k"), py::arg("vapour_density_kg_m3"),
           py::arg("liquid_density_kg_m3") = py::none(), R"doc(
Builds a profile from per-layer arrays of equal length: layer base and top heights (m above
sea level; each base must equal the previous top), total pressure (hPa), temperature (K),
water-vapour density (kg/m^3) and cloud liquid water content (kg/m^3, default 0). Raises
WvrValueError naming the first bad layer and field.
)doc")
      .def("__len__", &AtmosphereProfile::size)
      .def("__repr__", &describe)
      .def_property_readonly(
          "base_m",
          [](const AtmosphereProfile& p) { return layer_column(p, &AtmosphereLayer::base_m); },
          "Layer base heights above sea level (m), read-only array.")
      .def_property_readonly(
          "top_m",
          [](const AtmosphereProfile& p) { return layer_column(p, &AtmosphereLayer::top_m); },
          "Layer top heights above sea level (m), read-only array.")
      .def_property_readonly(
          "pressure_hpa",
          [](const AtmosphereProfile& p) {
            return layer_column(p, &AtmosphereLayer::pressure_hpa);
          },
          "Total pressure of each layer (hPa), read-only array.")
      .def_property_readonly(
          "temperature_k",
          [](const AtmosphereProfile& p) {
            return layer_column(p, &AtmosphereLayer::temperature_k);
          },
          "Temperature of each layer (K), read-only array.")
      .def_property_readonly(
          "vapour_density_kg_m3",
          [](const AtmosphereProfile& p) {
            return layer_column(p, &AtmosphereLayer::vapour_density_kg_m3);
          },
          "Water-vapour density of each layer (kg/m^3), read-only array.")
      .def_property_readonly(
          "liquid_density_kg_m3",
          [](const AtmosphereProfile& p) {
            return layer_column(p, &AtmosphereLayer::liquid_density_kg_m3);
          },
          "Cloud liquid water content of each layer (kg/m^3), read-only array.")
      .def_property_readonly(
          "vapour_pressure_hpa",
          [](const AtmosphereProfile& p) {
            std::vector<double> values;
            for (const AtmosphereLayer& l : p.layers()) values.push_back(l.vapour_pressure_hpa());
            return read_only_array(values);
          },
          "Water-vapour partial pressure of each layer (hPa), read-only array.")
      .def_property_readonly("ground_altitude_m", &AtmosphereProfile::ground_altitude_m,
                             "Base of the lowest layer (m above sea level).")
      .def_property_readonly("top_altitude_m", &AtmosphereProfile::top_altitude_m,
                             "Top of the highest layer (m above sea level).")
      .def_property_readonly("pwv_mm", &AtmosphereProfile::pwv_mm,
                             "Precipitable water vapour (mm = kg/m^2), the vertical column.")
      .def_property_readonly("liquid_water_path_kg_m2", &AtmosphereProfile::liquid_water_path_kg_m2,
                             "Vertical cloud liquid water path (kg/m^2 = mm).")
      .def(
          "to_dict",
          [](const AtmosphereProfile& p) {
            py::dict out;
            out["base_m"] = layer_column(p, &AtmosphereLayer::base_m);
            out["top_m"] = layer_column(p, &AtmosphereLayer::top_m);
            out["pressure_hpa"] = layer_column(p, &AtmosphereLayer::pressure_hpa);
            out["temperature_k"] = layer_column(p, &AtmosphereLayer::temperature_k);
            out["vapour_density_kg_m3"] = layer_column(p, &AtmosphereLayer::vapour_density_kg_m3);
            out["liquid_density_kg_m3"] = layer_column(p, &AtmosphereLayer::liquid_density_kg_m3);
            return out;
          },
          "The layer arrays as a dict whose keys are the constructor's arguments.")
      .def("scaled_to_pwv", &AtmosphereProfile::scaled_to_pwv, py::arg("pwv_mm"), R"doc(
The same profile with every vapour density multiplied so that its PWV equals pwv_mm (mm).
Raises WvrValueError for a negative or non-finite target, or a profile without vapour.
)doc")
      .def("with_cloud", &AtmosphereProfile::with_cloud, py::arg("base_above_ground_m"),
           py::arg("thickness_m"), py::arg("liquid_water_path_kg_m2"), R"doc(
The same profile with a uniform liquid cloud from base_above_ground_m (m above the lowest
layer's base) over thickness_m (m), holding liquid_water_path_kg_m2 (kg/m^2) in total, added
to any liquid already present.
)doc");

  m.def(
      "parametric_profile",
      [](double altitude_m, double surface_temperature_k, double surface_pressure_hpa,
         double lapse_rate_k_per_km, double tropopause_m, double water_scale_height_m,
         std::optional<double> pwv_mm, std::optional<double> surface_relative_humidity_pct,
         const py::object& inversion, int layer_count, double top_altitude_m) {
        SiteParameters site;
        site.altitude_m = altitude_m;
        site.surface_temperature_k = surface_temperature_k;
        site.surface_pressure_hpa = surface_pressure_hpa;
        site.lapse_rate_k_per_km = lapse_rate_k_per_km;
        site.tropopause_m = tropopause_m;
        site.water_scale_height_m = water_scale_height_m;
        site.pwv_mm = pwv_mm;
        site.surface_relative_humidity_pct = surface_relative_humidity_pct;
        site.inversion = inversion_from_object(inversion);
        LayerGrid grid;
        grid.layer_count = layer_count;
        grid.top_altitude_m = top_altitude_m;
        grid.validate();
        py::gil_scoped_release release;
        return make_parametric_profile(site, grid);
      },
      py::kw_only(), py::arg("altitude_m") = 0.0, py::arg("surface_temperature_k") = 288.15,
      py::arg("surface_pressure_hpa") = 1013.25, py::arg("lapse_rate_k_per_km") = 6.5,
      py::arg("tropopause_m") = 11000.0, py::arg("water_scale_height_m") = 2000.0,
      py::arg("pwv_mm") = py::none(), py::arg("surface_relative_humidity_pct") = py::none(),
      py::arg("inversion") = py::none(), py::arg("layer_count") = 48,
      py::arg("top_altitude_m") = 40000.0, R"doc(
Parametric profile of a site: temperature falls at lapse_rate_k_per_km (K/km) from
surface_temperature_k (K) at altitude_m (m above sea level) up to tropopause_m (m above sea
level), constant above; hydrostatic pressure from surface_pressure_hpa (hPa); vapour density
falling exponentially with water_scale_height_m (m). Give exactly one of pwv_mm (mm, the
column) and surface_relative_humidity_pct (%). inversion: None, a dict with
base_above_ground_m (m), depth_m (m) and temperature_jump_k (K), or a tuple of those three.
layer_count layers from the ground to top_altitude_m (m above sea level), fine near the ground.
Raises WvrValueError naming the first field out of range.
)doc");
}

}  // namespace wvr::python
