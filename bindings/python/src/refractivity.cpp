// Radio refractivity constants and tropospheric delay helpers.
#include "wvr/refractivity.hpp"

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {

RefractivityConstants refractivity_by_name(const std::string& name) {
  if (name == "thayer_1974") return RefractivityConstants::thayer_1974();
  if (name == "bevis_1994") return RefractivityConstants::bevis_1994();
  throw InvalidInput("refractivity = '" + name + "' is not one of thayer_1974, bevis_1994");
}

std::string refractivity_name(const RefractivityConstants& k) {
  for (const char* name : {"thayer_1974", "bevis_1994"}) {
    const RefractivityConstants preset = refractivity_by_name(name);
    if (preset.k1_k_per_hpa == k.k1_k_per_hpa && preset.k2_k_per_hpa == k.k2_k_per_hpa &&
        preset.k3_k2_per_hpa == k.k3_k2_per_hpa) {
      return name;
    }
  }
  return "custom";
}

void export_refractivity(py::module_& m) {
  m.def("saastamoinen_zenith_hydrostatic_delay_m",
        py::vectorize(&saastamoinen_zenith_hydrostatic_delay_m), py::arg("surface_pressure_hpa"),
        py::arg("latitude_deg"), py::arg("height_m"), R"doc(
Saastamoinen (1972) zenith hydrostatic delay (m) with the Davis et al. (1985) gravity term:
0.0022768 P / (1 - 0.00266 cos 2 phi - 0.00028 H_km), for surface pressure (hPa), latitude
(deg) and height above sea level (m). Broadcasts.
)doc");
  m.def(
      "bevis_wet_delay_per_pwv",
      [](const py::object& surface_temperature_k, const std::string& refractivity) {
        const RefractivityConstants k = refractivity_by_name(refractivity);
        return py::vectorize([k](double ts) { return bevis_wet_delay_per_pwv(ts, k); })(
            surface_temperature_k);
      },
      py::arg("surface_temperature_k"), py::arg("refractivity") = "thayer_1974", R"doc(
Zenith wet delay per unit of PWV (dimensionless: m of delay per m of PWV, i.e. mm per mm,
about 6.5), Bevis et al. (1992): 1e-6 rho_w R_v (k3 / Tm + k2') with the mean temperature
Tm = 70.2 + 0.72 Ts from the surface temperature (K). refractivity: "thayer_1974" or
"bevis_1994" constants. Broadcasts.
)doc");
}

}  // namespace wvr::python
