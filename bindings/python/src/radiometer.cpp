// Radiometer channel configuration and passband quadrature.
#include "wvr/radiometer.hpp"

#include <pybind11/stl.h>
#include <pybind11/stl/filesystem.h>

#include <set>
#include <sstream>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

Sideband sideband_by_name(const std::string& name, const std::string& field) {
  if (name == "double") return Sideband::kDouble;
  if (name == "upper") return Sideband::kUpper;
  if (name == "lower") return Sideband::kLower;
  throw InvalidInput(field + " = '" + name + "' is not one of double, upper, lower");
}

double number_in(const py::dict& d, const char* key, const std::string& prefix) {
  const py::handle value = d[key];
  if (!py::isinstance<py::float_>(value) && !py::isinstance<py::int_>(value)) {
    throw InvalidInput(prefix + "." + key + " is not a number");
  }
  return value.cast<double>();
}

RadiometerChannel channel_from_dict(const py::handle& object, std::size_t index) {
  const std::string prefix = "channels[" + std::to_string(index) + "]";
  if (!py::isinstance<py::dict>(object)) throw InvalidInput(prefix + " is not a dict");
  const auto d = py::reinterpret_borrow<py::dict>(object);
  static const std::set<std::string> known = {"name",     "if_centre_ghz",  "bandwidth_ghz",
                                              "sideband", "sideband_ratio", "noise_k"};
  for (auto item : d) {
    const std::string key = py::str(item.first);
    if (known.count(key) == 0) {
      throw InvalidInput(prefix + ": unknown key '" + key +
                         "' (expected name, if_centre_ghz, bandwidth_ghz, sideband, "
                         "sideband_ratio, noise_k)");
    }
  }
  for (const char* required : {"if_centre_ghz", "bandwidth_ghz"}) {
    if (!d.contains(required)) throw InvalidInput(prefix + " is missing '" + required + "'");
  }
  RadiometerChannel c;
  c.name = d.contains("name") ? py::str(d["name"]).cast<std::string>() : prefix;
  c.if_centre_ghz = number_in(d, "if_centre_ghz", prefix);
  c.bandwidth_ghz = number_in(d, "bandwidth_ghz", prefix);
  if (d.contains("sideband")) {
    c.sideband = sideband_by_name(py::str(d["sideband"]), prefix + ".sideband");
  }
  if (d.contains("sideband_ratio")) c.sideband_ratio = number_in(d, "sideband_ratio", prefix);
  if (d.contains("noise_k")) c.noise_k = number_in(d, "noise_k", prefix);
  return c;
}

RadiometerConfig make_radiometer(const std::string& name,
                                 double lo_freq_ghz,
                                 const py::iterable& channels,
                                 int quadrature_points_per_sideband) {
  RadiometerConfig config;
  config.name = name;
  config.lo_freq_ghz = lo_freq_ghz;
  config.quadrature_points_per_sideband = quadrature_points_per_sideband;
  std::size_t index = 0;
  for (const py::handle channel : channels) {
    config.channels.push_back(channel_from_dict(channel, index++));
  }
  config.validate();
  return config;
}

py::dict channel_to_dict(const RadiometerChannel& c) {
  py::dict out;
  out["name"] = c.name;
  out["if_centre_ghz"] = c.if_centre_ghz;
  out["bandwidth_ghz"] = c.bandwidth_ghz;
  out["sideband"] = to_string(c.sideband);
  out["sideband_ratio"] = c.sideband_ratio;
  out["noise_k"] = c.noise_k;
  return out;
}

template <typename Field>
py::array_t<double> channel_column(const RadiometerConfig& r, Field field) {
  std::vector<double> values;
  for (const RadiometerChannel& c : r.channels) values.push_back(c.*field);
  return read_only_array(values);
}

}  // namespace

void export_radiometer(py::module_& m) {
  py::class_<RadiometerConfig>(m, "Radiometer", R"doc(
A radiometer: local oscillator frequency and channels, each an intermediate-frequency band
received in the lower, the upper or both sidebands. Channel outputs are passband averages of
Rayleigh-Jeans-equivalent brightness. Immutable.
)doc")
      .def(py::init(&make_radiometer), py::kw_only(), py::arg("name") = "unnamed radiometer",
           py::arg("lo_freq_ghz"), py::arg("channels"),
           py::arg("quadrature_points_per_sideband") = 4, R"doc(
Builds a radiometer from the local oscillator frequency lo_freq_ghz (GHz) and a list of channel
dicts with keys if_centre_ghz (GHz, required), bandwidth_ghz (GHz, required), name,
sideband ("double" (default), "upper" or "lower"), sideband_ratio (upper / lower gain,
default 1) and noise_k (rms brightness noise per sample, K, default 0).
quadrature_points_per_sideband Gauss-Legendre nodes per sideband average each passband.
Raises WvrValueError naming the first bad field (e.g. "channels[1].bandwidth_ghz").
)doc")
      .def_static(
          "load", [](const std::filesystem::path& path) { return load_radiometer_config(path); },
          py::arg("path"), R"doc(
Reads and validates a radiometer TOML file (str or path-like). Raises WvrValueError naming the
file and the field, including for an unreadable file.
)doc")
      .def_static("from_toml", &parse_radiometer_config, py::arg("toml_text"),
                  py::arg("source_name") = "<string>",
                  "Parses and validates a radiometer from TOML text; source_name labels errors.")
      .def_readonly("name", &RadiometerConfig::name)
      .def_readonly("lo_freq_ghz", &RadiometerConfig::lo_freq_ghz,
                    "Local oscillator frequency (GHz).")
      .def_readonly("quadrature_points_per_sideband",
                    &RadiometerConfig::quadrature_points_per_sideband)
      .def_property_readonly(
          "channels",
          [](const RadiometerConfig& r) {
            py::list out;
            for (const RadiometerChannel& c : r.channels) out.append(channel_to_dict(c));
            return out;
          },
          "The channels as a list of dicts (the constructor's keys); copies.")
      .def_property_readonly(
          "channel_names",
          [](const RadiometerConfig& r) {
            std::vector<std::string> names;
            for (const RadiometerChannel& c : r.channels) names.push_back(c.name);
            return names;
          },
          "Channel names in channel order.")
      .def_property_readonly(
          "if_centre_ghz",
          [](const RadiometerConfig& r) {
            return channel_column(r, &RadiometerChannel::if_centre_ghz);
          },
          "IF band centre of each channel (GHz), read-only array.")
      .def_property_readonly(
          "bandwidth_ghz",
          [](const RadiometerConfig& r) {
            return channel_column(r, &RadiometerChannel::bandwidth_ghz);
          },
          "IF bandwidth of each channel (GHz), read-only array.")
      .def_property_readonly(
          "noise_k",
          [](const RadiometerConfig& r) { return channel_column(r, &RadiometerChannel::noise_k); },
          "Rms brightness noise per sample of each channel (K), read-only array.")
      .def("__len__", [](const RadiometerConfig& r) { return r.channels.size(); })
      .def(
          "quadrature",
          [](const RadiometerConfig& r) {
            py::list out;
            for (const auto& nodes : channel_quadrature(r)) {
              std::vector<double> freq, weight;
              for (const QuadratureNode& n : nodes) {
                freq.push_back(n.freq_ghz);
                weight.push_back(n.weight);
              }
              py::dict channel;
              channel["freq_ghz"] = read_only_array(freq);
              channel["weight"] = read_only_array(weight);
              out.append(channel);
            }
            return out;
          },
          R"doc(
Passband quadrature: for each channel a dict with freq_ghz (sky frequencies, GHz) and weight
(dimensionless, summing to 1), such that the channel brightness is sum(weight * J(freq_ghz)).
)doc")
      .def("__repr__", [](const RadiometerConfig& r) {
        std::ostringstream out;
        out << "Radiometer(name='" << r.name << "', lo_freq_ghz=" << r.lo_freq_ghz << ", "
            << r.channels.size() << " channels)";
        return out.str();
      });
}

}  // namespace wvr::python
