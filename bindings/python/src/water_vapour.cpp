// Water-vapour thermodynamics.
#include "wvr/water_vapour.hpp"

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

SaturationPhase phase_by_name(const std::string& phase) {
  if (phase == "water") return SaturationPhase::kWater;
  if (phase == "ice") return SaturationPhase::kIce;
  throw InvalidInput("phase = '" + phase + "' is not one of water, ice");
}

}  // namespace

void export_water_vapour(py::module_& m) {
  m.def(
      "saturation_vapour_pressure_hpa",
      [](const py::object& temperature_k, const py::object& total_pressure_hpa,
         const std::string& phase) {
        const SaturationPhase p = phase_by_name(phase);
        return py::vectorize([p](double t, double total) {
          // The ranges that sounding validation accepts.
          require_in_range("temperature_k", t, 150.0, 350.0, "K");
          require_in_range("total_pressure_hpa", total, 0.0, 1100.0, "hPa");
          return saturation_vapour_pressure_hpa(t, total, p);
        })(temperature_k, total_pressure_hpa);
      },
      py::arg("temperature_k"), py::arg("total_pressure_hpa") = 0.0, py::arg("phase") = "water",
      R"doc(
Saturation vapour pressure (hPa) over a plane surface of liquid water (phase="water") or ice
(phase="ice"), ITU-R P.453-13 eqs. (9)-(10), at temperature_k (K). total_pressure_hpa (hPa) > 0
applies the moist-air enhancement factor; 0 gives the pure-vapour value. Broadcasts.
)doc");
  m.def("vapour_pressure_hpa", py::vectorize([](double vapour_density_kg_m3, double temperature_k) {
          require_in_range("vapour_density_kg_m3", vapour_density_kg_m3, 0.0, 0.1, "kg/m^3");
          require_in_range("temperature_k", temperature_k, 100.0, 1500.0, "K");
          return vapour_pressure_hpa(vapour_density_kg_m3, temperature_k);
        }),
        py::arg("vapour_density_kg_m3"), py::arg("temperature_k"), R"doc(
Water-vapour partial pressure (hPa) of vapour density vapour_density_kg_m3 (kg/m^3) at
temperature_k (K), ideal gas. Broadcasts.
)doc");
}

}  // namespace wvr::python
