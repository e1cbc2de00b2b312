// Cloud liquid absorption, ITU-R P.840-9 section 2 (Rayleigh regime).
#include "wvr/cloud_liquid.hpp"

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

// Liquid water below its boiling point; the lower bound lets every cloud layer temperature a
// sky model may meet in practice be evaluated, including strongly supercooled droplets.
void check_liquid(double freq_ghz, double temperature_k) {
  require_in_range("freq_ghz", freq_ghz, 1.0, 1000.0, "GHz");
  require_in_range("temperature_k", temperature_k, 200.0, 373.15, "K");
}

}  // namespace

void export_cloud_liquid(py::module_& m) {
  m.def("cloud_liquid_specific_attenuation",
        py::vectorize([](double freq_ghz, double temperature_k) {
          check_liquid(freq_ghz, temperature_k);
          return cloud_liquid_specific_attenuation_db_per_km_per_g_m3(freq_ghz, temperature_k);
        }),
        py::arg("freq_ghz"), py::arg("temperature_k"), R"doc(
ITU-R P.840-9 specific attenuation coefficient K_l of cloud liquid water, in (dB/km)/(g/m^3),
at frequency freq_ghz (GHz, 1-1000) and liquid temperature temperature_k (K, 200-373.15).
Broadcasts like a numpy ufunc.
)doc");
  m.def("cloud_liquid_absorption_m2_per_kg",
        py::vectorize([](double freq_ghz, double temperature_k) {
          check_liquid(freq_ghz, temperature_k);
          return cloud_liquid_absorption_m2_per_kg(freq_ghz, temperature_k);
        }),
        py::arg("freq_ghz"), py::arg("temperature_k"), R"doc(
Mass absorption coefficient of cloud liquid water, (Np/m) per (kg/m^3) of liquid water content,
i.e. m^2/kg, at freq_ghz (GHz) and temperature_k (K). Broadcasts like a numpy ufunc.
)doc");
}

}  // namespace wvr::python
