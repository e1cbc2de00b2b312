// Gaseous specific attenuation of the ITU-R P.676-13 Annex 1 model, in P.676's own units and
// conventions, for comparisons with published tables.
#include "wvr/absorption.hpp"

#include <pybind11/stl.h>

#include <span>
#include <string>
#include <vector>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

// Checks every element of `array` against [lo, hi]; messages name the element, e.g.
// "freq_ghz[3] = 1200 is outside [1, 1000] GHz".
void require_each_in_range(const DoubleArray& array,
                           const std::string& field,
                           double lo,
                           double hi,
                           const std::string& unit) {
  const double* values = array.data();
  for (py::ssize_t i = 0; i < array.size(); ++i) {
    const std::string name = array.ndim() == 0 ? field : field + "[" + std::to_string(i) + "]";
    require_in_range(name, values[i], lo, hi, unit);
  }
}

py::dict absorption(const py::handle& freq_ghz,
                    const py::handle& dry_pressure_hpa,
                    const py::handle& temperature_k,
                    const py::handle& vapour_density_g_m3,
                    const std::string& absorption_model) {
  const auto model = make_absorption_model(absorption_model);
  const DoubleArray f_in = as_double_array(freq_ghz, "freq_ghz");
  const DoubleArray p_in = as_double_array(dry_pressure_hpa, "dry_pressure_hpa");
  const DoubleArray t_in = as_double_array(temperature_k, "temperature_k");
  const DoubleArray rho_in = as_double_array(vapour_density_g_m3, "vapour_density_g_m3");
  // The model's domain (1-1000 GHz) and the physical ranges AtmosphereProfile accepts.
  require_each_in_range(f_in, "freq_ghz", 1.0, 1000.0, "GHz");
  require_each_in_range(p_in, "dry_pressure_hpa", 0.0, 1200.0, "hPa");
  require_each_in_range(t_in, "temperature_k", 100.0, 1500.0, "K");
  require_each_in_range(rho_in, "vapour_density_g_m3", 0.0, 100.0, "g/m^3");

  const py::tuple broadcast =
      py::module_::import("numpy").attr("broadcast_arrays")(f_in, p_in, t_in, rho_in);
  const DoubleArray f = as_double_array(broadcast[0], "freq_ghz");
  const DoubleArray p = as_double_array(broadcast[1], "dry_pressure_hpa");
  const DoubleArray t = as_double_array(broadcast[2], "temperature_k");
  const DoubleArray rho = as_double_array(broadcast[3], "vapour_density_g_m3");
  const std::vector<py::ssize_t> shape(f.shape(), f.shape() + f.ndim());
  py::array_t<double> oxygen(shape), water(shape), total(shape);
  const std::size_t n = static_cast<std::size_t>(f.size());
  {
    const double* fv = f.data();
    const double* pv = p.data();
    const double* tv = t.data();
    const double* rv = rho.data();
    double* ox = oxygen.mutable_data();
    double* wv = water.mutable_data();
    double* tot = total.mutable_data();
    const bool one_state = p_in.size() == 1 && t_in.size() == 1 && rho_in.size() == 1;
    py::gil_scoped_release release;
    std::vector<double> dry(one_state ? n : 1), wet(one_state ? n : 1);
    // P.676-13 Annex 1: water-vapour partial pressure e = rho T / 216.7 hPa (rho in g/m^3).
    auto state = [&](std::size_t i) {
      const double e = rv[i] * tv[i] / 216.7;
      return GasState{pv[i], e, tv[i]};
    };
    if (one_state && n > 0) {
      model->absorption(std::span<const double>(fv, n), state(0), dry, wet);
    }
    for (std::size_t i = 0; i < n; ++i) {
      if (!one_state) model->absorption(std::span<const double>(fv + i, 1), state(i), dry, wet);
      const std::size_t k = one_state ? i : 0;
      ox[i] = db_per_km_from_np_per_m(dry[k]);
      wv[i] = db_per_km_from_np_per_m(wet[k]);
      tot[i] = ox[i] + wv[i];
    }
  }
  // Scalar arguments give Python floats, as numpy ufuncs do.
  auto result = [&](const py::array_t<double>& array) -> py::object {
    if (array.ndim() == 0) return py::float_(*array.data());
    return array;
  };
  py::dict out;
  out["gamma_oxygen_db_per_km"] = result(oxygen);
  out["gamma_water_db_per_km"] = result(water);
  out["gamma_total_db_per_km"] = result(total);
  return out;
}

}  // namespace

void export_absorption(py::module_& m) {
  m.def("absorption", &absorption, py::arg("freq_ghz"), py::arg("dry_pressure_hpa"),
        py::arg("temperature_k"), py::arg("vapour_density_g_m3"), py::kw_only(),
        py::arg("absorption_model") = std::string(kDefaultAbsorptionModel), R"doc(
Specific attenuation of ITU-R P.676-13 Annex 1 (line by line, 1-1000 GHz) in dB/km, or with
absorption_model="r17" the Rosenkranz (2017) water vapour beside P.676 oxygen.

Arguments broadcast against each other like numpy arrays: frequency (GHz), dry-air pressure
(hPa; total pressure = dry + vapour, the P.676 convention), temperature (K) and water-vapour
density (g/m^3), with the vapour partial pressure e = rho T / 216.7 hPa as in P.676.
Returns a dict of arrays of the broadcast shape: gamma_oxygen_db_per_km (oxygen lines and dry
continuum), gamma_water_db_per_km (water-vapour lines) and gamma_total_db_per_km (their sum).
Raises WvrValueError naming the first element out of range or not finite.
)doc");
  m.def(
      "absorption_model_name",
      [](const std::string& key) { return make_absorption_model(key)->name(); },
      py::arg("absorption_model") = std::string(kDefaultAbsorptionModel),
      "Name and source of a gaseous absorption model (\"p676\", the default of SkyModel, or "
      "\"r17\").");
  m.def(
      "absorption_model_keys", [] { return absorption_model_keys(); },
      "Keys of the selectable absorption models.");
}

}  // namespace wvr::python
