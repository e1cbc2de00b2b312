// Scenario files and the synthetic-night simulator.
#include "wvr/simulator.hpp"

#include <pybind11/stl.h>
#include <pybind11/stl/filesystem.h>

#include <algorithm>
#include <cstdint>
#include <filesystem>
#include <limits>
#include <optional>
#include <sstream>

#include "arrays.hpp"
#include "common.hpp"
#include "wvr/error.hpp"
#include "wvr/scenario.hpp"

namespace wvr::python {
namespace {

int antenna_count(const Scenario& s) {
  return s.array.kind == LayoutKind::kExplicit ? static_cast<int>(s.array.explicit_enu_m.size())
                                               : s.array.antenna_count;
}

// A copy of `scenario` with some settings replaced, validated. Fewer antennas drop the faults
// of the antennas removed (and, for an explicit layout, keep the first positions), so that a
// shortened demo scenario stays valid.
Scenario with_overrides(const Scenario& scenario,
                        const py::object& seed,
                        const py::object& duration_s,
                        const py::object& antenna_count_override) {
  Scenario s = scenario;
  if (!seed.is_none()) {
    s.seed = static_cast<std::uint64_t>(
        integer_of(seed, "seed", 0, std::numeric_limits<std::int64_t>::max()));
  }
  if (!duration_s.is_none()) s.duration_s = number_of(duration_s, "duration_s");
  if (!antenna_count_override.is_none()) {
    const auto count = static_cast<int>(
        integer_of(antenna_count_override, "antenna_count", 0, std::numeric_limits<int>::max()));
    if (s.array.kind == LayoutKind::kExplicit) {
      if (count > antenna_count(s)) {
        throw InvalidInput("antenna_count = " + std::to_string(count) + " exceeds the " +
                           std::to_string(antenna_count(s)) +
                           " positions of the scenario's explicit layout");
      }
      s.array.explicit_enu_m.resize(static_cast<std::size_t>(count));
    }
    s.array.antenna_count = count;
    std::erase_if(s.faults, [count](const RadiometerFault& f) { return f.antenna >= count; });
  }
  s.validate();
  return s;
}

py::list clouds_to_python(const Scenario& s) {
  py::list out;
  for (const CloudEpisode& c : s.clouds) {
    py::dict d;
    d["start_s"] = c.start_s;
    d["stop_s"] = c.stop_s;
    d["liquid_water_path_kg_m2"] = c.liquid_water_path_kg_m2;
    d["ramp_s"] = c.ramp_s;
    out.append(d);
  }
  return out;
}

py::list faults_to_python(const Scenario& s) {
  py::list out;
  for (const RadiometerFault& f : s.faults) {
    py::dict d;
    d["antenna"] = f.antenna;
    d["kind"] = to_string(f.kind);
    d["start_s"] = f.start_s;
    d["stop_s"] = f.stop_s;
    d["channel"] = f.channel;
    d["magnitude"] = f.magnitude;
    out.append(d);
  }
  return out;
}

}  // namespace

void export_simulator(py::module_& m) {
  py::class_<Scenario>(m, "Scenario", R"doc(
A synthetic observing night: site, radiometer, array layout, atmosphere, turbulence, clouds,
radiometer faults and the observing pattern, read from a scenario TOML file
(testdata/demo-scenario.toml is the annotated example). Immutable; with_overrides returns a
changed copy. Simulate it with wvr.simulate_night.
)doc")
      .def_readonly("name", &Scenario::name)
      .def_readonly("seed", &Scenario::seed, "Random seed; the night is deterministic for it.")
      .def_readonly("start_utc", &Scenario::start_utc, "Start of the night, YYYY-MM-DDThh:mm:ssZ.")
      .def_readonly("duration_s", &Scenario::duration_s, "Length of the night (s).")
      .def_readonly("integration_s", &Scenario::integration_s, "Radiometer sample interval (s).")
      .def_property_readonly("time_count", &Scenario::time_count, "Radiometer samples per antenna.")
      .def_property_readonly("antenna_count", &antenna_count)
      .def_property_readonly(
          "layout", [](const Scenario& s) { return to_string(s.array.kind); },
          "Array layout kind: compact, extended, random or explicit.")
      .def_readonly("site", &Scenario::site, "The site (wvr.SiteConfig).")
      .def_readonly("radiometer", &Scenario::radiometer, "The radiometer (wvr.Radiometer).")
      .def_readonly("pwv_mm", &Scenario::pwv_mm, "Mean zenith PWV at the start (mm).")
      .def_readonly("pwv_drift_mm_per_hour", &Scenario::pwv_drift_mm_per_hour,
                    "Linear drift of the mean PWV (mm/h).")
      .def_property_readonly(
          "water_continuum_scale",
          [](const Scenario& s) { return s.true_sky.water_continuum_scale; },
          "The sky's water continuum relative to the retrieval model's (1 = same).")
      .def_property_readonly(
          "true_sky",
          [](const Scenario& s) {
            py::dict out;
            for (const auto& [name, value] : s.true_sky.describe()) out[py::str(name)] = value;
            return out;
          },
          R"doc(
How the sky that makes the night differs from the site model (the scenario's [true_sky]): a
dict of name -> value text, e.g. {"absorption_model": "r17", "calibration_gain_sigma": "0.02"};
empty when the model makes the night.
)doc")
      .def_property_readonly(
          "obs_freq_ghz", [](const Scenario& s) { return s.observing.obs_freq_ghz; },
          "Sky frequency the array observes at (GHz).")
      .def_property_readonly("clouds", &clouds_to_python, R"doc(
Cloud episodes: list of dicts start_s, stop_s, ramp_s (s), liquid_water_path_kg_m2 (kg/m^2).
)doc")
      .def_property_readonly("faults", &faults_to_python, R"doc(
Radiometer faults: list of dicts antenna, kind (spike, gain_drift, stuck_channel,
dead_channel, dropout), start_s, stop_s (s), channel (-1 = all), magnitude.
)doc")
      .def("with_overrides", &with_overrides, py::kw_only(), py::arg("seed") = py::none(),
           py::arg("duration_s") = py::none(), py::arg("antenna_count") = py::none(), R"doc(
A validated copy with seed, duration_s (s) and/or antenna_count replaced (None keeps the
scenario's). Fewer antennas drop the faults of the antennas removed; an explicit layout keeps
its first antenna_count positions. Raises WvrValueError for invalid values.
)doc")
      .def("__repr__", [](const Scenario& s) {
        std::ostringstream out;
        out << "Scenario(name='" << s.name << "', seed=" << s.seed << ", " << antenna_count(s)
            << " antennas, duration_s=" << s.duration_s << ", integration_s=" << s.integration_s
            << ")";
        return out.str();
      });

  m.def("load_scenario", &load_scenario, py::arg("path"), R"doc(
Reads and validates a scenario TOML file (str or path-like); its site_file and radiometer_file
are relative to the scenario file. Raises WvrValueError naming the file and the field.
)doc");
  m.def(
      "parse_scenario",
      [](const std::string& toml_text, const std::string& source_name,
         const std::optional<std::filesystem::path>& base_directory) {
        return parse_scenario(toml_text, source_name,
                              base_directory ? *base_directory : std::filesystem::current_path());
      },
      py::arg("toml_text"), py::arg("source_name") = "<string>",
      py::arg("base_directory") = py::none(), R"doc(
Parses and validates a scenario from TOML text; site_file and radiometer_file are relative to
base_directory (default: the current directory); source_name labels errors.
)doc");
  m.def(
      "simulate_night",
      [](const Scenario& scenario, int threads) {
        if (threads < 0) {
          throw InvalidInput("threads = " + std::to_string(threads) + " must be >= 0");
        }
        py::gil_scoped_release release;
        Night night = simulate_night(scenario, SimulationOptions{threads});
        // Every Night handed to Python is valid (the array views rely on it).
        validate_night(night, "simulated night");
        return night;
      },
      py::arg("scenario"), py::kw_only(), py::arg("threads") = 0, R"doc(
Simulates the scenario's night: radiometer brightness, pointing, scans, weather, calibrator
phases and the truth (wet and dry path, line-of-sight PWV, labelled episodes). threads: worker
threads (0 = all cores); the result does not depend on it. Releases the GIL. Raises
WvrValueError for an invalid scenario or a source that sets below the model's elevation limit.
)doc");
}

}  // namespace wvr::python
