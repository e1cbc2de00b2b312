// Sky-dip fit: the layered model (PWV shared, offset and gain per channel) and, per channel, the
// single-slab form for comparison. See wvr/sky_dip.hpp.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "skydip/least_squares.hpp"
#include "skydip/slab_fit.hpp"
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"
#include "wvr/planck.hpp"
#include "wvr/sky_dip.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {
namespace {

std::string format_number(const char* format, double value) {
  char text[64];
  std::snprintf(text, sizeof text, format, value);
  return text;
}

// Distinct elevations of the dip (exact repeats; a scan holds each elevation for a while) and
// each sample's index into them. Checks every field on the way.
struct DipLayout {
  std::vector<double> elevation_deg;
  std::vector<std::size_t> elevation_index;  // per sample
};

DipLayout validate_dip(const SkyDip& dip, std::size_t channels, double min_elevation_deg) {
  const std::size_t n = dip.elevation_deg.size();
  if (dip.brightness_k.size() != n)
    throw InvalidInput("brightness_k has " + std::to_string(dip.brightness_k.size()) +
                       " rows but elevation_deg has " + std::to_string(n));
  if (!dip.time_s.empty() && dip.time_s.size() != n)
    throw InvalidInput("time_s has " + std::to_string(dip.time_s.size()) +
                       " values but elevation_deg has " + std::to_string(n));
  DipLayout layout;
  for (std::size_t i = 0; i < n; ++i) {
    const std::string row = "[" + std::to_string(i) + "]";
    if (!dip.time_s.empty()) require_finite("time_s" + row, dip.time_s[i]);
    require_in_range("elevation_deg" + row, dip.elevation_deg[i], min_elevation_deg, 90.0, "deg");
    if (dip.brightness_k[i].size() != channels)
      throw InvalidInput("brightness_k" + row + " has " +
                         std::to_string(dip.brightness_k[i].size()) +
                         " channels; the radiometer has " + std::to_string(channels));
    for (std::size_t c = 0; c < channels; ++c)
      require_finite("brightness_k" + row + "[" + std::to_string(c) + "]", dip.brightness_k[i][c]);
    const auto found =
        std::find(layout.elevation_deg.begin(), layout.elevation_deg.end(), dip.elevation_deg[i]);
    layout.elevation_index.push_back(
        static_cast<std::size_t>(found - layout.elevation_deg.begin()));
    if (found == layout.elevation_deg.end()) layout.elevation_deg.push_back(dip.elevation_deg[i]);
  }
  if (layout.elevation_deg.size() < 3)
    throw InvalidInput("elevation_deg holds " + std::to_string(layout.elevation_deg.size()) +
                       " distinct elevations; a dip needs at least 3 (offset, opacity and "
                       "temperature or gain)");
  return layout;
}

// Zenith opacity and opacity-weighted temperatures of each channel through a profile.
struct ChannelColumn {
  double opacity_np = 0.0;
  double temperature_k = 0.0;
  double rj_temperature_k = 0.0;
  double background_k = 0.0;  // RJ-equivalent cosmic background
};

std::vector<ChannelColumn> channel_columns(const SkyModel& sky,
                                           const AtmosphereProfile& profile,
                                           const RadiometerConfig& radiometer) {
  const auto nodes = channel_quadrature(radiometer);
  std::vector<ChannelColumn> columns;
  for (const auto& channel_nodes : nodes) {
    std::vector<double> freq_ghz;
    for (const QuadratureNode& q : channel_nodes) freq_ghz.push_back(q.freq_ghz);
    std::vector<double> dry(freq_ghz.size()), water(freq_ghz.size());
    ChannelColumn column;
    double weighted_t = 0.0, weighted_rj = 0.0;
    for (const AtmosphereLayer& layer : profile.layers()) {
      sky.absorption_model().absorption(freq_ghz, layer.gas_state(), dry, water);
      for (std::size_t k = 0; k < freq_ghz.size(); ++k) {
        const double tau = channel_nodes[k].weight * (dry[k] + water[k]) * layer.thickness_m();
        column.opacity_np += tau;
        weighted_t += tau * layer.temperature_k;
        weighted_rj += tau * rj_brightness_k(freq_ghz[k], layer.temperature_k);
      }
    }
    for (std::size_t k = 0; k < freq_ghz.size(); ++k)
      column.background_k +=
          channel_nodes[k].weight * rj_brightness_k(freq_ghz[k], sky.options().cosmic_background_k);
    column.temperature_k = weighted_t / column.opacity_np;
    column.rj_temperature_k = weighted_rj / column.opacity_np;
    columns.push_back(column);
  }
  return columns;
}

}  // namespace

void SkyDipFitOptions::validate() const {
  make_absorption_model(absorption_model);
  require_in_range("gain_prior_sigma", gain_prior_sigma, 1e-6, 10.0);
  require_in_range("slab_temperature_prior_sigma_k", slab_temperature_prior_sigma_k, 1e-3, 1000.0,
                   "K");
  require_in_range("slab_agreement_tolerance", slab_agreement_tolerance, 0.0, 10.0);
  require_in_range("min_data_information_share", min_data_information_share, 0.0, 1.0);
  require_in_range("max_offset_gain_correlation", max_offset_gain_correlation, 0.0, 1.0);
  if (max_iterations < 1)
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) + " must be >= 1");
}

SkyDipFit fit_sky_dip(const SkyDip& dip,
                      const AtmosphereProfile& profile,
                      const RadiometerConfig& radiometer,
                      const SkyDipFitOptions& options) {
  options.validate();
  radiometer.validate();
  const SkyModel sky(make_absorption_model(options.absorption_model));
  const std::size_t channels = radiometer.channels.size();
  const DipLayout layout = validate_dip(dip, channels, sky.options().min_elevation_deg);
  if (!(profile.pwv_mm() > 0.0))
    throw InvalidInput("profile pwv_mm = " + format_number("%g", profile.pwv_mm()) +
                       ": the site profile needs water vapour to give the vapour's shape");
  const std::size_t n = dip.elevation_deg.size();
  const auto nc = static_cast<Eigen::Index>(channels);
  std::vector<double> noise_k(channels);
  for (std::size_t c = 0; c < channels; ++c)
    noise_k[c] = radiometer.channels[c].noise_k > 0.0 ? radiometer.channels[c].noise_k : 1.0;

  // Parameters: x = [pwv_mm, offset_k[c]..., gain[c]...]; gains carry their prior as extra rows.
  const Eigen::Index rows = static_cast<Eigen::Index>(n) * nc + nc;
  auto residuals = [&](const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& J) {
    const AtmosphereProfile scaled = profile.scaled_to_pwv(x[0]);
    std::vector<ChannelBrightness> at;
    for (double el : layout.elevation_deg) at.push_back(sky.channels(scaled, radiometer, el));
    r.resize(rows);
    J.setZero(rows, 1 + 2 * nc);
    for (std::size_t i = 0; i < n; ++i) {
      const ChannelBrightness& b = at[layout.elevation_index[i]];
      for (Eigen::Index c = 0; c < nc; ++c) {
        const auto cu = static_cast<std::size_t>(c);
        const Eigen::Index row = static_cast<Eigen::Index>(i) * nc + c;
        const double model = x[1 + c] + x[1 + nc + c] * b.brightness_k[cu];
        r[row] = (model - dip.brightness_k[i][cu]) / noise_k[cu];
        J(row, 0) = x[1 + nc + c] * b.d_brightness_d_pwv_k_per_mm[cu] / noise_k[cu];
        J(row, 1 + c) = 1.0 / noise_k[cu];
        J(row, 1 + nc + c) = b.brightness_k[cu] / noise_k[cu];
      }
    }
    for (Eigen::Index c = 0; c < nc; ++c) {
      r[rows - nc + c] = (x[1 + nc + c] - 1.0) / options.gain_prior_sigma;
      J(rows - nc + c, 1 + nc + c) = 1.0 / options.gain_prior_sigma;
    }
  };
  Eigen::VectorXd start = Eigen::VectorXd::Zero(1 + 2 * nc);
  start[0] = profile.pwv_mm();
  start.tail(nc).setOnes();
  Eigen::VectorXd lower = Eigen::VectorXd::Constant(1 + 2 * nc, -1e9);
  lower[0] = 1e-3;
  const detail::LeastSquaresResult fit =
      detail::levenberg_marquardt(residuals, start, lower, options.max_iterations);

  Eigen::VectorXd r;
  Eigen::MatrixXd J;
  residuals(fit.x, r, J);
  const Eigen::Index data_rows = static_cast<Eigen::Index>(n) * nc;
  // The prior rows count as observations: rows - parameters degrees of freedom.
  const double dof = std::max<double>(1.0, static_cast<double>(rows - (1 + 2 * nc)));
  const double chi2_scale = std::max(fit.cost / dof, 1e-30);

  SkyDipFit out;
  out.antenna = dip.antenna;
  out.model = sky.absorption_model().name();
  out.samples = static_cast<int>(n);
  out.elevations = static_cast<int>(layout.elevation_deg.size());
  out.converged = fit.converged;
  out.reduced_chi_square = fit.cost / dof;
  out.pwv_mm = fit.x[0];
  out.pwv_sigma_mm = std::sqrt(fit.covariance(0, 0) * chi2_scale);
  double residual_k2 = 0.0;
  for (Eigen::Index row = 0; row < data_rows; ++row) {
    const double k = r[row] * noise_k[static_cast<std::size_t>(row % nc)];
    residual_k2 += k * k;
  }
  out.rms_k = std::sqrt(residual_k2 / static_cast<double>(data_rows));
  out.airmass_model = "plane-parallel, A = 1 / sin(elevation)";

  // Zenith opacity and effective temperatures at the fitted PWV; the opacity's uncertainty
  // through its PWV derivative (central difference over +/- 1 %).
  const AtmosphereProfile fitted = profile.scaled_to_pwv(out.pwv_mm);
  const std::vector<ChannelColumn> columns = channel_columns(sky, fitted, radiometer);
  const std::vector<ChannelColumn> columns_up =
      channel_columns(sky, profile.scaled_to_pwv(out.pwv_mm * 1.01), radiometer);
  const std::vector<ChannelColumn> columns_down =
      channel_columns(sky, profile.scaled_to_pwv(out.pwv_mm * 0.99), radiometer);

  out.notes.push_back("gains: Gaussian prior 1 +/- " +
                      format_number("%g", options.gain_prior_sigma) +
                      " (a gain and a thin channel's opacity enter as a product)");
  out.notes.push_back(
      "slab: gain fixed at 1 (exactly degenerate with T_atm: the slab temperature is gain x "
      "T_atm); T_atm prior = layered RJ-equivalent effective temperature +/- " +
      format_number("%g", options.slab_temperature_prior_sigma_k) +
      " K; cosmic background a known term; airmass " + out.airmass_model);
  if (!fit.converged) out.notes.push_back("layered fit did not converge");

  std::vector<double> elevation(dip.elevation_deg), brightness(n);
  for (Eigen::Index c = 0; c < nc; ++c) {
    const auto cu = static_cast<std::size_t>(c);
    SkyDipChannelFit ch;
    ch.channel = radiometer.channels[cu].name;
    ch.offset_k = fit.x[1 + c];
    ch.offset_sigma_k = std::sqrt(fit.covariance(1 + c, 1 + c) * chi2_scale);
    ch.gain = fit.x[1 + nc + c];
    ch.gain_sigma = std::sqrt(fit.covariance(1 + nc + c, 1 + nc + c) * chi2_scale);
    const double prior_variance = options.gain_prior_sigma * options.gain_prior_sigma;
    ch.gain_data_share =
        std::clamp(1.0 - fit.covariance(1 + nc + c, 1 + nc + c) / prior_variance, 0.0, 1.0);
    ch.zenith_opacity_np = columns[cu].opacity_np;
    const double d_tau_d_pwv =
        (columns_up[cu].opacity_np - columns_down[cu].opacity_np) / (0.02 * out.pwv_mm);
    ch.zenith_opacity_sigma_np = std::abs(d_tau_d_pwv) * out.pwv_sigma_mm;
    ch.effective_temperature_k = columns[cu].temperature_k;
    ch.effective_rj_temperature_k = columns[cu].rj_temperature_k;

    for (std::size_t i = 0; i < n; ++i) brightness[i] = dip.brightness_k[i][cu];
    detail::SlabFitInput slab_input;
    slab_input.elevation_deg = elevation;
    slab_input.brightness_k = brightness;
    slab_input.noise_k = noise_k[cu];
    slab_input.background_k = columns[cu].background_k;
    slab_input.temperature_prior_k = columns[cu].rj_temperature_k;
    slab_input.temperature_prior_sigma_k = options.slab_temperature_prior_sigma_k;
    slab_input.opacity_start_np = columns[cu].opacity_np;
    slab_input.max_iterations = options.max_iterations;
    const detail::SlabFitResult slab = detail::fit_slab(slab_input);
    ch.slab_opacity_np = slab.opacity_np;
    ch.slab_opacity_sigma_np = slab.opacity_sigma_np;
    ch.slab_temperature_k = slab.temperature_k;
    ch.slab_temperature_sigma_k = slab.temperature_sigma_k;
    ch.slab_temperature_data_share = slab.temperature_data_share;
    ch.slab_offset_k = slab.offset_k;
    ch.slab_offset_sigma_k = slab.offset_sigma_k;
    ch.slab_rms_k = slab.rms_k;
    ch.slab_opacity_difference = slab.opacity_np / ch.zenith_opacity_np - 1.0;

    std::vector<std::string> said;
    if (std::abs(ch.slab_opacity_difference) > options.slab_agreement_tolerance)
      said.push_back("slab opacity " + format_number("%+.1f", 100.0 * ch.slab_opacity_difference) +
                     " % from the layered fit's (tolerance " +
                     format_number("%g", 100.0 * options.slab_agreement_tolerance) +
                     " %): the slab form does not hold in this channel (thick or non-isothermal "
                     "atmosphere, or opacity varying over the passband)");
    // A channel near saturation barely changes over the dip: its offset and gain then trade
    // against each other and only their combination is measured.
    const double offset_gain_correlation =
        fit.covariance(1 + c, 1 + nc + c) /
        std::sqrt(fit.covariance(1 + c, 1 + c) * fit.covariance(1 + nc + c, 1 + nc + c));
    if (std::abs(offset_gain_correlation) > options.max_offset_gain_correlation)
      said.push_back("offset and gain nearly degenerate (correlation " +
                     format_number("%+.3f", offset_gain_correlation) +
                     "): the brightness changes little over the dip; offset uncertain by " +
                     format_number("%.2f", ch.offset_sigma_k) + " K");
    if (ch.gain_data_share < options.min_data_information_share)
      said.push_back("gain set mostly by its prior (data give " +
                     format_number("%.0f", 100.0 * ch.gain_data_share) + " % of its information)");
    if (slab.temperature_data_share < options.min_data_information_share)
      said.push_back("slab T_atm set mostly by its prior (data give " +
                     format_number("%.0f", 100.0 * slab.temperature_data_share) +
                     " % of its information)");
    if (!slab.converged) said.push_back("slab fit did not converge");
    for (const std::string& s : said) {
      if (!ch.note.empty()) ch.note += "; ";
      ch.note += s;
    }
    if (!ch.note.empty()) out.notes.push_back(ch.channel + ": " + ch.note);
    out.channels.push_back(std::move(ch));
  }
  return out;
}

}  // namespace wvr
