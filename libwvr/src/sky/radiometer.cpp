#include "wvr/radiometer.hpp"

#include <cmath>
#include <numbers>
#include <sstream>

#include "core/config_text.hpp"
#include "core/gauss_legendre.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

struct SkyBand {
  double low_ghz;
  double high_ghz;
};

std::vector<SkyBand> sky_bands(double lo_ghz, const RadiometerChannel& c) {
  const double lo_edge = c.if_centre_ghz - 0.5 * c.bandwidth_ghz;
  const double hi_edge = c.if_centre_ghz + 0.5 * c.bandwidth_ghz;
  std::vector<SkyBand> bands;
  if (c.sideband != Sideband::kUpper) bands.push_back({lo_ghz - hi_edge, lo_ghz - lo_edge});
  if (c.sideband != Sideband::kLower) bands.push_back({lo_ghz + lo_edge, lo_ghz + hi_edge});
  return bands;
}

}  // namespace

std::string to_string(Sideband sideband) {
  switch (sideband) {
    case Sideband::kDouble:
      return "double";
    case Sideband::kUpper:
      return "upper";
    case Sideband::kLower:
      return "lower";
  }
  return "unknown";
}

void RadiometerConfig::validate() const {
  require_in_range("lo_freq_ghz", lo_freq_ghz, 1.0, 1000.0, "GHz");
  if (channels.empty()) throw InvalidInput("radiometer '" + name + "': channel list is empty");
  if (quadrature_points_per_sideband < 1 || quadrature_points_per_sideband > 64) {
    throw InvalidInput("quadrature_points_per_sideband = " +
                       std::to_string(quadrature_points_per_sideband) + " is outside [1, 64]");
  }
  std::vector<std::pair<std::size_t, SkyBand>> all_bands;
  for (std::size_t i = 0; i < channels.size(); ++i) {
    const RadiometerChannel& c = channels[i];
    const std::string prefix = "channels[" + std::to_string(i) + "]";
    for (std::size_t j = 0; j < i && !c.name.empty(); ++j) {
      if (channels[j].name == c.name) {
        throw InvalidInput(prefix + ".name = '" + c.name + "' repeats channels[" +
                           std::to_string(j) + "].name");
      }
    }
    require_in_range(prefix + ".bandwidth_ghz", c.bandwidth_ghz, 1e-6, 100.0, "GHz");
    require_in_range(prefix + ".if_centre_ghz", c.if_centre_ghz, 0.0, 1000.0, "GHz");
    if (c.if_centre_ghz - 0.5 * c.bandwidth_ghz <= 0.0) {
      throw InvalidInput(describe_value(prefix + ".if_centre_ghz", c.if_centre_ghz) +
                         " with bandwidth_ghz = " + std::to_string(c.bandwidth_ghz) +
                         " puts the band edge at or below 0 GHz IF");
    }
    require_in_range(prefix + ".sideband_ratio", c.sideband_ratio, 1e-6, 1e6);
    require_in_range(prefix + ".noise_k", c.noise_k, 0.0, 1000.0, "K");
    for (const SkyBand& band : sky_bands(lo_freq_ghz, c)) {
      require_in_range(prefix + " sky band edge (GHz)", band.low_ghz, 1.0, 1000.0, "GHz");
      require_in_range(prefix + " sky band edge (GHz)", band.high_ghz, 1.0, 1000.0, "GHz");
      for (const auto& [j, other] : all_bands) {
        if (band.low_ghz < other.high_ghz && other.low_ghz < band.high_ghz) {
          std::ostringstream msg;
          msg << prefix << " ('" << c.name << "') overlaps channels[" << j << "] ('"
              << channels[j].name << "') between " << std::max(band.low_ghz, other.low_ghz)
              << " and " << std::min(band.high_ghz, other.high_ghz) << " GHz";
          throw InvalidInput(msg.str());
        }
      }
      all_bands.emplace_back(i, band);
    }
  }
}

std::vector<std::vector<QuadratureNode>> channel_quadrature(const RadiometerConfig& config) {
  const detail::GaussLegendreRule& rule =
      detail::gauss_legendre(config.quadrature_points_per_sideband);
  const std::vector<double>& x = rule.node;
  const std::vector<double>& w = rule.weight;
  std::vector<std::vector<QuadratureNode>> out;
  out.reserve(config.channels.size());
  for (const RadiometerChannel& c : config.channels) {
    std::vector<QuadratureNode> nodes;
    const double upper_weight = c.sideband == Sideband::kDouble
                                    ? c.sideband_ratio / (1.0 + c.sideband_ratio)
                                : c.sideband == Sideband::kUpper ? 1.0
                                                                 : 0.0;
    for (int side = -1; side <= 1; side += 2) {
      const double sideband_weight = side > 0 ? upper_weight : 1.0 - upper_weight;
      if (sideband_weight <= 0.0) continue;
      for (std::size_t k = 0; k < x.size(); ++k) {
        const double offset = c.if_centre_ghz + 0.5 * c.bandwidth_ghz * x[k];
        nodes.push_back({config.lo_freq_ghz + side * offset, sideband_weight * 0.5 * w[k]});
      }
    }
    out.push_back(std::move(nodes));
  }
  return out;
}

RadiometerConfig parse_radiometer_config(const std::string& toml_text,
                                         const std::string& source_name) {
  const toml::table table = detail::parse_toml(toml_text, source_name);
  detail::StrictTable top(table, source_name, "");
  RadiometerConfig config;
  config.name = top.text("name", "unnamed radiometer");
  config.lo_freq_ghz = top.required_number("lo_freq_ghz");
  config.quadrature_points_per_sideband = static_cast<int>(
      top.integer("quadrature_points_per_sideband", config.quadrature_points_per_sideband, 1, 64));
  if (top.node("channels") == nullptr) {
    throw InvalidInput(source_name + ": missing [[channels]] list");
  }
  const std::vector<const toml::table*> channels = top.table_list("channels");
  for (std::size_t i = 0; i < channels.size(); ++i) {
    const std::string prefix = "channels[" + std::to_string(i) + "]";
    detail::StrictTable t(*channels[i], source_name, prefix + ".");
    RadiometerChannel c;
    c.name = t.text("name", prefix);
    if (c.name.empty()) throw InvalidInput(source_name + ": " + prefix + ".name is empty");
    c.if_centre_ghz = t.required_number("if_centre_ghz");
    c.bandwidth_ghz = t.required_number("bandwidth_ghz");
    c.sideband_ratio = t.number("sideband_ratio", 1.0);
    c.noise_k = t.number("noise_k", 0.0);
    const std::string sideband = t.text("sideband", "double");
    if (sideband == "double") {
      c.sideband = Sideband::kDouble;
    } else if (sideband == "upper") {
      c.sideband = Sideband::kUpper;
    } else if (sideband == "lower") {
      c.sideband = Sideband::kLower;
    } else {
      throw InvalidInput(source_name + ": " + prefix + ".sideband = '" + sideband +
                         "' is not one of double, upper, lower");
    }
    t.reject_unknown_keys();
    config.channels.push_back(c);
  }
  top.reject_unknown_keys();
  try {
    config.validate();
  } catch (const InvalidInput& error) {
    throw InvalidInput(source_name + ": " + error.what());
  }
  return config;
}

RadiometerConfig load_radiometer_config(const std::filesystem::path& path) {
  return parse_radiometer_config(detail::read_text_file(path, "radiometer file"), path.string());
}

}  // namespace wvr
