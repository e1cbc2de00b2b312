// Standard atmospheres.
#include "wvr/standard_atmosphere.hpp"

#include "common.hpp"

namespace wvr::python {

void export_standard_atmosphere(py::module_& m) {
  m.def(
      "us_standard_atmosphere_1976",
      [](const py::object& height_m) {
        py::dict out;
        out["temperature_k"] = py::vectorize(
            [](double h) { return us_standard_atmosphere_1976(h).temperature_k; })(height_m);
        out["pressure_hpa"] = py::vectorize(
            [](double h) { return us_standard_atmosphere_1976(h).pressure_hpa; })(height_m);
        return out;
      },
      py::arg("height_m"), R"doc(
U.S. Standard Atmosphere 1976 (equal to the ITU-R P.835-6 mean annual global reference
atmosphere) at geometric height height_m (m above sea level, 0-86000). Returns a dict with
temperature_k (K) and pressure_hpa (hPa), of height_m's shape. Broadcasts.
)doc");
  m.def("p835_reference_vapour_density_kg_m3", py::vectorize(&p835_reference_vapour_density_kg_m3),
        py::arg("height_m"), R"doc(
Water-vapour density (kg/m^3) of the ITU-R P.835-6 mean annual global reference atmosphere,
7.5 exp(-h / 2 km) g/m^3, at geometric height height_m (m). Broadcasts.
)doc");
}

}  // namespace wvr::python
