// Profiles from radiosonde or model soundings.
#include "wvr/sounding.hpp"

#include <pybind11/stl/filesystem.h>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {

void export_sounding(py::module_& m) {
  m.def(
      "profile_from_sounding",
      [](const py::handle& height_m, const py::handle& pressure_hpa,
         const py::handle& temperature_k, const py::handle& vapour_density_kg_m3, int layer_count) {
        const std::vector<double> height = as_vector(height_m, "height_m");
        const std::vector<double> pressure = as_vector(pressure_hpa, "pressure_hpa");
        const std::vector<double> temperature = as_vector(temperature_k, "temperature_k");
        const std::vector<double> vapour = as_vector(vapour_density_kg_m3, "vapour_density_kg_m3");
        auto check_length = [&](const std::vector<double>& values, const char* field) {
          if (values.size() != height.size()) {
            throw InvalidInput(std::string(field) + " has " + std::to_string(values.size()) +
                               " values but height_m has " + std::to_string(height.size()));
          }
        };
        check_length(pressure, "pressure_hpa");
        check_length(temperature, "temperature_k");
        check_length(vapour, "vapour_density_kg_m3");
        std::vector<SoundingLevel> levels(height.size());
        for (std::size_t i = 0; i < levels.size(); ++i) {
          levels[i] = {height[i], pressure[i], temperature[i], vapour[i]};
        }
        LayerGrid grid;
        grid.layer_count = layer_count;
        py::gil_scoped_release release;
        return profile_from_sounding(levels, grid);
      },
      py::arg("height_m"), py::arg("pressure_hpa"), py::arg("temperature_k"),
      py::arg("vapour_density_kg_m3"), py::kw_only(), py::arg("layer_count") = 48, R"doc(
Profile between the lowest and the highest level of a sounding, given as arrays of equal length:
height (m above sea level, strictly increasing), total pressure (hPa, strictly decreasing),
temperature (K) and water-vapour density (kg/m^3). Intervals are split so that no layer is
thicker than a layer_count-layer grid over the same height range. Raises WvrValueError naming
the bad level and field.
)doc");

  m.def(
      "read_sounding_csv",
      [](const std::filesystem::path& path) {
        const std::vector<SoundingLevel> levels = read_sounding_csv(path);
        std::vector<double> height, pressure, temperature, vapour;
        for (const SoundingLevel& l : levels) {
          height.push_back(l.height_m);
          pressure.push_back(l.pressure_hpa);
          temperature.push_back(l.temperature_k);
          vapour.push_back(l.vapour_density_kg_m3);
        }
        py::dict out;
        out["height_m"] = read_only_array(height);
        out["pressure_hpa"] = read_only_array(pressure);
        out["temperature_k"] = read_only_array(temperature);
        out["vapour_density_kg_m3"] = read_only_array(vapour);
        return out;
      },
      py::arg("path"), R"doc(
Reads a CSV sounding (columns height_m, pressure_hpa, temperature_c and one of
vapour_density_g_m3, dewpoint_c, relative_humidity_pct; '#' comment lines) and returns a dict
of arrays height_m (m), pressure_hpa (hPa), temperature_k (K) and vapour_density_kg_m3 (kg/m^3),
ready for wvr.profile_from_sounding(**levels). Raises WvrValueError naming the file and line.
)doc");
}

}  // namespace wvr::python
