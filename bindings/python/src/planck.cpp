// Planck radiance expressed as a temperature.
#include "wvr/planck.hpp"

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

void check_frequency(double freq_ghz) {
  require_finite("freq_ghz", freq_ghz);
  if (!(freq_ghz > 0.0)) throw InvalidInput(describe_value("freq_ghz", freq_ghz) + " is not > 0");
}

}  // namespace

void export_planck(py::module_& m) {
  m.def("rj_brightness_k", py::vectorize([](double freq_ghz, double temperature_k) {
          check_frequency(freq_ghz);
          require_finite("temperature_k", temperature_k);
          if (temperature_k < 0.0) {
            throw InvalidInput(describe_value("temperature_k", temperature_k) + " is negative");
          }
          return rj_brightness_k(freq_ghz, temperature_k);
        }),
        py::arg("freq_ghz"), py::arg("temperature_k"), R"doc(
Rayleigh-Jeans-equivalent brightness J(nu, T) = (h nu / k) / (exp(h nu / k T) - 1) in K of a
blackbody at temperature_k (K) and freq_ghz (GHz): radiance scaled by c^2 / (2 k nu^2), linear
in power. Broadcasts like a numpy ufunc.
)doc");
  m.def("planck_brightness_k", py::vectorize([](double freq_ghz, double rj_brightness_k) {
          check_frequency(freq_ghz);
          require_finite("rj_brightness_k", rj_brightness_k);
          if (rj_brightness_k < 0.0) {
            throw InvalidInput(describe_value("rj_brightness_k", rj_brightness_k) + " is negative");
          }
          return planck_brightness_k(freq_ghz, rj_brightness_k);
        }),
        py::arg("freq_ghz"), py::arg("rj_brightness_k"), R"doc(
Planck brightness temperature (K): the physical temperature of a blackbody whose
Rayleigh-Jeans-equivalent brightness at freq_ghz (GHz) is rj_brightness_k (K); the inverse of
rj_brightness_k. Broadcasts like a numpy ufunc.
)doc");
}

}  // namespace wvr::python
