// Cross-calibration of the array's radiometers (wvr/radiometer_cross_calibration.hpp).
#include "wvr/radiometer_cross_calibration.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "core/statistics.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Block medians Y[a][b] of one channel (NaN where the block has too few good samples).
struct Blocks {
  std::size_t count = 0;
  std::vector<double> mid_s;
  std::vector<std::size_t> first, last;  // sample index range [first, last) of each block
};

Blocks make_blocks(const Night& night, double block_s) {
  Blocks blocks;
  const std::vector<double>& t = night.radiometer.time_s;
  std::size_t k = 0;
  while (k < t.size()) {
    const double start = t[k];
    std::size_t end = k;
    while (end < t.size() && t[end] < start + block_s) ++end;
    blocks.first.push_back(k);
    blocks.last.push_back(end);
    blocks.mid_s.push_back(0.5 * (t[k] + t[end - 1]));
    k = end;
  }
  blocks.count = blocks.first.size();
  return blocks;
}

std::vector<double> block_medians(const Night& night,
                                  const Blocks& blocks,
                                  std::size_t channel,
                                  double min_valid_fraction) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  std::vector<double> y(na * blocks.count, kNaN);
  std::vector<double> values;
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t b = 0; b < blocks.count; ++b) {
      values.clear();
      for (std::size_t k = blocks.first[b]; k < blocks.last[b]; ++k) {
        if (!night.radiometer.valid[a * nt + k]) continue;
        const double v = night.radiometer.brightness_k[(a * nt + k) * nc + channel];
        if (std::isfinite(v)) values.push_back(v);
      }
      const double n = static_cast<double>(blocks.last[b] - blocks.first[b]);
      if (!values.empty() && static_cast<double>(values.size()) >= min_valid_fraction * n)
        y[a * blocks.count + b] = detail::finite_median(values);
    }
  }
  return y;
}

double huber_weight(double residual, double threshold) {
  const double r = std::abs(residual);
  return r <= threshold ? 1.0 : threshold / r;
}

// Weighted least squares of y on the columns of X; returns the parameters, their covariance
// scaled by the weighted residual variance, and the residual rms. False when singular or
// without spare degrees of freedom.
struct LinearFit {
  Eigen::VectorXd p;
  Eigen::MatrixXd covariance;
  double residual_rms = 0.0;
};

bool weighted_fit(const Eigen::MatrixXd& x,
                  const Eigen::VectorXd& y,
                  const Eigen::VectorXd& w,
                  LinearFit& fit) {
  const Eigen::Index n = x.rows(), m = x.cols();
  if (n <= m) return false;
  const Eigen::MatrixXd xtw = x.transpose() * w.asDiagonal();
  const Eigen::MatrixXd normal = xtw * x;
  Eigen::LDLT<Eigen::MatrixXd> ldlt(normal);
  if (ldlt.info() != Eigen::Success || ldlt.rcond() < 1e-14) return false;
  fit.p = ldlt.solve(xtw * y);
  const Eigen::VectorXd r = y - x * fit.p;
  // The weights are relative (Huber), so the scale comes from the weighted residuals.
  const double chi2 = (w.array() * r.array().square()).sum();
  fit.covariance =
      ldlt.solve(Eigen::MatrixXd::Identity(m, m)) * (chi2 / static_cast<double>(n - m));
  fit.residual_rms = std::sqrt(r.squaredNorm() / static_cast<double>(n));
  return true;
}

// Solves one channel; fills out[antenna] and returns the sky per block and the robust scale.
// Units marked in `with_drift` carry the drift terms in the solve itself (their brightness is
// o + do tau + (g + dg tau) S), so that a drifting unit does not bend the array's sky; the
// others define the reference (their drift, if any, is measured afterwards with S fixed).
struct ChannelSolve {
  std::vector<double> sky;
  double robust_scale = kNaN;
  int iterations = 0;
  std::string message;
};

ChannelSolve solve_channel(const std::vector<double>& y,
                           std::size_t na,
                           const Blocks& blocks,
                           double reference_time_s,
                           const std::vector<std::uint8_t>& with_drift,
                           const CrossCalibrationOptions& options,
                           std::vector<ChannelCalibration>& out) {
  const std::size_t nb = blocks.count;
  ChannelSolve s;
  // Per unit: offset, gain, offset drift (K/h), gain drift (1/h) at tau hours from mid-night.
  std::vector<Eigen::Vector4d> p(na, Eigen::Vector4d(0.0, 1.0, 0.0, 0.0));
  std::vector<double> weight(na * nb, 1.0), tau_h(nb);
  for (std::size_t b = 0; b < nb; ++b) tau_h[b] = (blocks.mid_s[b] - reference_time_s) / 3600.0;
  std::vector<std::uint8_t> unit_ok(na, 0);
  s.sky.assign(nb, kNaN);
  for (std::size_t a = 0; a < na; ++a) {
    std::size_t n = 0;
    for (std::size_t b = 0; b < nb; ++b) n += std::isfinite(y[a * nb + b]);
    unit_ok[a] = n >= (with_drift[a] ? 5u : 3u);
  }
  const auto units_ok = static_cast<std::size_t>(std::count(unit_ok.begin(), unit_ok.end(), 1));
  if (units_ok < 3) {
    s.message = "fewer than 3 units with 3 usable blocks";
    return s;
  }
  std::size_t references_ok = 0;
  for (std::size_t a = 0; a < na; ++a) references_ok += unit_ok[a] && !with_drift[a];
  auto offset_at = [&](std::size_t a, std::size_t b) { return p[a](0) + p[a](2) * tau_h[b]; };
  auto gain_at = [&](std::size_t a, std::size_t b) { return p[a](1) + p[a](3) * tau_h[b]; };
  auto residual = [&](std::size_t a, std::size_t b) {
    return y[a * nb + b] - offset_at(a, b) - gain_at(a, b) * s.sky[b];
  };
  auto update_sky = [&] {
    for (std::size_t b = 0; b < nb; ++b) {
      double sw = 0.0, swy = 0.0;
      for (std::size_t a = 0; a < na; ++a) {
        const double v = y[a * nb + b], g = gain_at(a, b);
        if (!unit_ok[a] || !std::isfinite(v) || !(g > 0.0)) continue;
        // (v - o) / g estimates S with variance sigma^2 / g^2: weight w g^2.
        const double w = weight[a * nb + b] * g * g;
        sw += w;
        swy += w * (v - offset_at(a, b)) / g;
      }
      s.sky[b] = sw > 0.0 ? swy / sw : kNaN;
    }
  };
  auto usable = [&](std::size_t a, std::size_t b) {
    return unit_ok[a] && std::isfinite(y[a * nb + b]) && std::isfinite(s.sky[b]);
  };
  auto update_weights = [&] {
    std::vector<double> residuals;
    for (std::size_t a = 0; a < na; ++a)
      for (std::size_t b = 0; b < nb; ++b)
        if (usable(a, b)) residuals.push_back(std::abs(residual(a, b)));
    // 1.4826 MAD: the standard deviation of a Gaussian (textbook robust scale).
    s.robust_scale = std::max(1.4826 * detail::finite_median(residuals), 1e-6);
    for (std::size_t a = 0; a < na; ++a)
      for (std::size_t b = 0; b < nb; ++b)
        if (usable(a, b))
          weight[a * nb + b] = huber_weight(residual(a, b), options.huber_k * s.robust_scale);
  };
  // Weighted fit of unit a against the current sky with `columns` parameters (2: o, g;
  // 4: with drift).
  auto fit_unit = [&](std::size_t a, int columns, LinearFit& fit) {
    std::vector<std::size_t> used;
    for (std::size_t b = 0; b < nb; ++b)
      if (usable(a, b)) used.push_back(b);
    Eigen::MatrixXd x(used.size(), columns);
    Eigen::VectorXd yy(used.size()), w(used.size());
    for (std::size_t i = 0; i < used.size(); ++i) {
      const std::size_t b = used[i];
      x(i, 0) = 1.0;
      x(i, 1) = s.sky[b];
      if (columns == 4) x(i, 2) = tau_h[b], x(i, 3) = s.sky[b] * tau_h[b];
      yy(i) = y[a * nb + b];
      w(i) = weight[a * nb + b];
    }
    return weighted_fit(x, yy, w, fit) ? used.size() : std::size_t{0};
  };

  update_sky();
  double previous_change = std::numeric_limits<double>::infinity();
  for (int it = 0; it < options.max_iterations; ++it) {
    s.iterations = it + 1;
    double change = 0.0;
    for (std::size_t a = 0; a < na; ++a) {
      if (!unit_ok[a]) continue;
      LinearFit fit;
      const int columns = with_drift[a] ? 4 : 2;
      if (fit_unit(a, columns, fit) == 0) continue;
      Eigen::Vector4d next = Eigen::Vector4d::Zero();
      next.head(columns) = fit.p;
      change = std::max(change, (next - p[a]).cwiseAbs().maxCoeff());
      p[a] = next;
    }
    // Back onto the array's scale, S -> alpha S + beta with alpha the mean gain and beta the
    // mean offset at mid-night: then mean gain 1 and mean offset 0 there.
    // The means run over the reference units (those without drift terms) when there are
    // enough: a drifting unit's offset and gain are poorly separated from its drift.
    double alpha = 0.0, beta = 0.0, count = 0.0;
    for (std::size_t a = 0; a < na; ++a) {
      if (!unit_ok[a] || (with_drift[a] && references_ok >= 3)) continue;
      alpha += p[a](1);
      beta += p[a](0);
      count += 1.0;
    }
    alpha /= count;
    beta /= count;
    if (!(alpha > 0.0)) {
      s.message = "the array's mean gain is not positive (no sky signal)";
      return s;
    }
    for (std::size_t a = 0; a < na; ++a) {
      if (!unit_ok[a]) continue;
      p[a](0) -= beta * p[a](1) / alpha;
      p[a](2) -= beta * p[a](3) / alpha;
      p[a](1) /= alpha;
      p[a](3) /= alpha;
    }
    update_sky();
    update_weights();
    if (change < 1e-9 || (change < 1e-6 && change >= previous_change)) break;
    previous_change = change;
  }

  // Uncertainties from each unit's own fit against the final sky; the drift of the reference
  // units from a refit with the drift terms and S fixed.
  double mean_sky = 0.0;
  std::size_t sky_n = 0;
  for (double v : s.sky)
    if (std::isfinite(v)) mean_sky += v, ++sky_n;
  mean_sky /= static_cast<double>(std::max<std::size_t>(sky_n, 1));
  const auto [first_h, last_h] = std::minmax_element(tau_h.begin(), tau_h.end());
  for (std::size_t a = 0; a < na; ++a) {
    ChannelCalibration& cal = out[a];
    if (!unit_ok[a]) continue;
    LinearFit fit, drift;
    const std::size_t used = fit_unit(a, with_drift[a] ? 4 : 2, fit);
    if (used == 0) continue;
    cal.solved = true;
    cal.offset_k = p[a](0);
    cal.gain = p[a](1);
    cal.offset_sigma_k = std::sqrt(fit.covariance(0, 0));
    cal.gain_sigma = std::sqrt(fit.covariance(1, 1));
    cal.residual_rms_k = fit.residual_rms;
    cal.blocks_used = used;
    if (with_drift[a]) {
      drift = fit;
    } else if (fit_unit(a, 4, drift) == 0) {
      continue;
    }
    const Eigen::Vector2d d = with_drift[a] ? Eigen::Vector2d(p[a].tail<2>()) : drift.p.tail<2>();
    const Eigen::Matrix2d cov = drift.covariance.bottomRightCorner<2, 2>();
    cal.offset_drift_k_per_h = d(0);
    cal.gain_drift_per_h = d(1);
    cal.offset_drift_sigma_k_per_h = std::sqrt(cov(0, 0));
    cal.gain_drift_sigma_per_h = std::sqrt(cov(1, 1));
    const Eigen::LDLT<Eigen::Matrix2d> ldlt(cov);
    cal.drift_chi2 = ldlt.rcond() > 1e-14 ? d.dot(ldlt.solve(d)) : 0.0;
    cal.drift_change_k = (d(0) + d(1) * mean_sky) * (*last_h - *first_h);
  }
  return s;
}

// Replaces each solved unit's offset and gain sigmas by a delete-a-group block jackknife over
// time (see the header for the method's sources): the night's blocks are cut into `groups`
// contiguous groups, the whole solve is repeated without each group, and the variance is (G - 1) /
// G times the sum of squared deviations of the G replicates from their mean. Contiguous groups much
// longer than the residuals' correlation time keep that correlation inside the replicates, which is
// what the straight-line fit's covariance (independent blocks) misses. The larger of the two sigmas
// is kept: with G - 1 degrees of freedom the jackknife can come out below the independent-block
// value by chance, and positively correlated residuals never make the true spread smaller than
// that.
template <class Solve>
void block_jackknife_sigmas(const std::vector<std::vector<double>>& measured,
                            std::size_t blocks,
                            int groups,
                            const Solve& solve,
                            CrossCalibration& x) {
  const std::size_t na = x.antennas, nc = x.channels;
  const std::size_t g = std::min(static_cast<std::size_t>(groups), blocks);
  std::vector<std::vector<double>> offsets(na * nc), gains(na * nc);
  for (std::size_t j = 0; j < g; ++j) {
    std::vector<std::vector<double>> without = measured;
    const std::size_t first = j * blocks / g, last = (j + 1) * blocks / g;
    for (std::vector<double>& channel : without)
      for (std::size_t a = 0; a < na; ++a)
        std::fill(channel.begin() + static_cast<std::ptrdiff_t>(a * blocks + first),
                  channel.begin() + static_cast<std::ptrdiff_t>(a * blocks + last), kNaN);
    const CrossCalibration replicate = solve(without);
    for (std::size_t a = 0; a < na; ++a) {
      for (std::size_t c = 0; c < nc; ++c) {
        const ChannelCalibration& cal = replicate.units[a].channels[c];
        if (!cal.solved) continue;
        offsets[a * nc + c].push_back(cal.offset_k);
        gains[a * nc + c].push_back(cal.gain);
      }
    }
  }
  auto jackknife_sigma = [](const std::vector<double>& values) {
    const auto n = static_cast<double>(values.size());
    double mean = 0.0, sum2 = 0.0;
    for (double v : values) mean += v / n;
    for (double v : values) sum2 += (v - mean) * (v - mean);
    return std::sqrt((n - 1.0) / n * sum2);
  };
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t c = 0; c < nc; ++c) {
      ChannelCalibration& cal = x.units[a].channels[c];
      // Three replicates at least: fewer say nothing about the spread.
      if (!cal.solved || offsets[a * nc + c].size() < 3) continue;
      cal.offset_sigma_k = std::max(cal.offset_sigma_k, jackknife_sigma(offsets[a * nc + c]));
      cal.gain_sigma = std::max(cal.gain_sigma, jackknife_sigma(gains[a * nc + c]));
    }
  }
}

bool channel_drifts(const ChannelCalibration& cal, const CrossCalibrationOptions& options) {
  return cal.solved && cal.drift_chi2 > options.drift_chi2_threshold &&
         std::abs(cal.drift_change_k) > options.min_drift_k;
}

std::string channel_label(const CrossCalibration& x, std::size_t c) {
  return c < x.channel_names.size() ? x.channel_names[c] : "channel " + std::to_string(c);
}

}  // namespace

void CrossCalibrationOptions::validate() const {
  require_in_range("block_s", block_s, 1.0, 1e6, "s");
  require_in_range("min_valid_fraction", min_valid_fraction, 0.0, 1.0);
  require_in_range("huber_k", huber_k, 0.5, 100.0);
  if (max_iterations < 1)
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) + " must be >= 1");
  require_in_range("offset_limit_k", offset_limit_k, 0.0, 1e3, "K");
  require_in_range("gain_limit", gain_limit, 0.0, 1.0);
  require_in_range("drift_chi2_threshold", drift_chi2_threshold, 0.0, 1e12);
  require_in_range("min_drift_k", min_drift_k, 0.0, 1e3, "K");
  if (jackknife_groups < 3 || jackknife_groups > 1000)
    throw InvalidInput("jackknife_groups = " + std::to_string(jackknife_groups) +
                       " is outside [3, 1000]");
  if (column_passes < 1 || column_passes > 100)
    throw InvalidInput("column_passes = " + std::to_string(column_passes) + " is outside [1, 100]");
}

std::vector<std::string> CrossCalibration::flagged_units() const {
  std::vector<std::string> names;
  for (const UnitCalibration& u : units)
    if (u.disagrees || u.drifting) names.push_back(u.antenna);
  return names;
}

std::string CrossCalibration::brief_report() const {
  std::ostringstream out;
  out << "cross-calibration of " << antennas << " units over " << blocks
      << " blocks (relative to the array: mean offset 0 K, mean gain 1)";
  const std::vector<std::string> flagged = flagged_units();
  if (flagged.empty()) {
    out << ": every unit agrees with the array";
  } else {
    out << ": ";
    for (std::size_t i = 0; i < flagged.size(); ++i) out << (i ? ", " : "") << flagged[i];
    out << (flagged.size() == 1 ? " disagrees or drifts" : " disagree or drift");
  }
  if (!message.empty()) out << " (" << message << ")";
  return out.str();
}

CrossCalibration cross_calibrate(const Night& night, const CrossCalibrationOptions& options) {
  options.validate();
  validate_night(night);
  const std::size_t na = night.antenna_count(), nc = night.channel_count();
  if (na < 3)
    throw InvalidInput("night has " + std::to_string(na) +
                       " antennas; cross-calibration needs at least 3");
  const Blocks blocks = make_blocks(night, options.block_s);
  if (blocks.count < 3)
    throw InvalidInput("block_s = " + std::to_string(options.block_s) + " gives " +
                       std::to_string(blocks.count) +
                       " blocks over the night; cross-calibration needs at least 3");
  CrossCalibration x;
  x.antennas = na;
  x.channels = nc;
  x.blocks = blocks.count;
  for (const auto& ch : night.radiometer.config.channels) x.channel_names.push_back(ch.name);
  x.block_mid_s = blocks.mid_s;
  x.sky_k.assign(blocks.count * nc, kNaN);
  x.robust_scale_k.assign(nc, kNaN);
  x.iterations.assign(nc, 0);
  x.reference_time_s = 0.5 * (night.radiometer.time_s.front() + night.radiometer.time_s.back());
  x.units.resize(na);
  for (std::size_t a = 0; a < na; ++a) {
    x.units[a].antenna = night.array.antenna_names[a];
    x.units[a].radiometer_id =
        a < night.array.radiometer_ids.size() ? night.array.radiometer_ids[a] : "";
    x.units[a].channels.resize(nc);
  }
  const std::size_t nb = blocks.count;
  std::vector<std::vector<double>> measured(nc);
  for (std::size_t c = 0; c < nc; ++c)
    measured[c] = block_medians(night, blocks, c, options.min_valid_fraction);
  // Solves every channel of the block values `values` ([channel][antenna, block]) into `out` with
  // `passes` rounds of removing the common-column differences.
  auto solve_all = [&](const std::vector<std::vector<double>>& values,
                       const std::vector<std::uint8_t>& with_drift, CrossCalibration& out) {
    std::vector<std::vector<double>> cleaned(nc);
    for (std::size_t c = 0; c < nc; ++c) cleaned[c] = values[c];
    out.column_pattern.assign(nc, 0.0);
    const int passes = options.remove_column_differences ? options.column_passes : 1;
    std::vector<ChannelCalibration> column(na);
    for (int pass = 0; pass < passes; ++pass) {
      out.message.clear();
      for (std::size_t c = 0; c < nc; ++c) {
        std::fill(column.begin(), column.end(), ChannelCalibration{});
        const ChannelSolve s = solve_channel(cleaned[c], na, blocks, out.reference_time_s,
                                             with_drift, options, column);
        for (std::size_t a = 0; a < na; ++a) out.units[a].channels[c] = column[a];
        for (std::size_t b = 0; b < nb; ++b) out.sky_k[b * nc + c] = s.sky[b];
        out.robust_scale_k[c] = s.robust_scale;
        out.iterations[c] = s.iterations;
        if (!s.message.empty())
          out.message +=
              (out.message.empty() ? "" : "; ") + channel_label(out, c) + ": " + s.message;
      }
      if (pass + 1 == passes) break;
      // Residuals of the block values; their common direction across channels is
      // the signature of a vapour column that differs between antennas within a block.
      std::vector<double> residual(na * nb * nc, kNaN);
      Eigen::MatrixXd scatter =
          Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(nc), static_cast<Eigen::Index>(nc));
      for (std::size_t a = 0; a < na; ++a) {
        for (std::size_t b = 0; b < nb; ++b) {
          const double tau_h =
              with_drift[a] ? (blocks.mid_s[b] - out.reference_time_s) / 3600.0 : 0.0;
          Eigen::VectorXd r(static_cast<Eigen::Index>(nc));
          bool complete = true;
          for (std::size_t c = 0; c < nc; ++c) {
            const ChannelCalibration& cal = out.units[a].channels[c];
            const double offset = cal.offset_k + cal.offset_drift_k_per_h * tau_h;
            const double gain = cal.gain + cal.gain_drift_per_h * tau_h;
            const double v = values[c][a * nb + b] - offset - gain * out.sky_k[b * nc + c];
            residual[(a * nb + b) * nc + c] = cal.solved ? v : kNaN;
            complete = complete && std::isfinite(residual[(a * nb + b) * nc + c]);
            r(static_cast<Eigen::Index>(c)) = v;
          }
          if (complete) scatter += r * r.transpose();
        }
      }
      const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(scatter);
      if (eigen.info() != Eigen::Success || !(eigen.eigenvalues().maxCoeff() > 0.0)) break;
      const Eigen::VectorXd pattern = eigen.eigenvectors().col(static_cast<Eigen::Index>(nc) - 1);
      for (std::size_t c = 0; c < nc; ++c)
        out.column_pattern[c] = pattern(static_cast<Eigen::Index>(c));
      for (std::size_t a = 0; a < na; ++a) {
        for (std::size_t b = 0; b < nb; ++b) {
          double num = 0.0, den = 0.0;
          for (std::size_t c = 0; c < nc; ++c) {
            const double r = residual[(a * nb + b) * nc + c];
            if (!std::isfinite(r)) continue;
            num += out.column_pattern[c] * r;
            den += out.column_pattern[c] * out.column_pattern[c];
          }
          const double amount = den > 0.0 ? num / den : 0.0;
          for (std::size_t c = 0; c < nc; ++c)
            cleaned[c][a * nb + b] = values[c][a * nb + b] - out.column_pattern[c] * amount;
        }
      }
    }
  };
  // First every unit as a reference; then the units found drifting get drift terms in the
  // solve (otherwise their unmodelled drift bends the array's sky), and the rest is solved
  // again.
  std::vector<std::uint8_t> with_drift(na, 0);
  solve_all(measured, with_drift, x);
  bool any_drift = false;
  for (std::size_t a = 0; a < na; ++a) {
    for (const ChannelCalibration& cal : x.units[a].channels)
      with_drift[a] = with_drift[a] || channel_drifts(cal, options);
    any_drift = any_drift || with_drift[a];
  }
  if (any_drift) solve_all(measured, with_drift, x);
  block_jackknife_sigmas(
      measured, blocks.count, options.jackknife_groups,
      [&](const auto& m) {
        CrossCalibration replicate = x;
        solve_all(m, with_drift, replicate);
        return replicate;
      },
      x);
  for (UnitCalibration& u : x.units) {
    std::ostringstream verdict;
    for (std::size_t c = 0; c < nc; ++c) {
      const ChannelCalibration& cal = u.channels[c];
      if (!cal.solved) continue;
      const bool offset_off = std::abs(cal.offset_k) > options.offset_limit_k &&
                              std::abs(cal.offset_k) > 3.0 * cal.offset_sigma_k;
      const bool gain_off = std::abs(cal.gain - 1.0) > options.gain_limit &&
                            std::abs(cal.gain - 1.0) > 3.0 * cal.gain_sigma;
      const bool drifts = channel_drifts(cal, options);
      u.disagrees = u.disagrees || offset_off || gain_off;
      u.drifting = u.drifting || drifts;
      const std::string label = channel_label(x, c);
      if (offset_off) {
        verdict << (verdict.tellp() > 0 ? "; " : "") << label << " offset "
                << std::round(cal.offset_k * 100.0) / 100.0 << " K";
      }
      if (gain_off) {
        verdict << (verdict.tellp() > 0 ? "; " : "") << label << " gain "
                << std::round(cal.gain * 1e4) / 1e4;
      }
      if (drifts) {
        verdict << (verdict.tellp() > 0 ? "; " : "") << label << " drifts "
                << std::round(cal.drift_change_k * 100.0) / 100.0 << " K over the night";
      }
    }
    u.verdict = verdict.tellp() > 0 ? verdict.str() : "ok";
  }
  return x;
}

namespace {

void require_matching_shape(const Night& night, const CrossCalibration& calibration) {
  const std::size_t na = night.antenna_count(), nc = night.channel_count();
  if (calibration.antennas != na || calibration.channels != nc || calibration.units.size() != na)
    throw InvalidInput("cross-calibration has " + std::to_string(calibration.antennas) +
                       " antennas x " + std::to_string(calibration.channels) +
                       " channels, the night " + std::to_string(na) + " x " + std::to_string(nc));
}

}  // namespace

Night apply_cross_calibration(const Night& night,
                              const CrossCalibration& calibration,
                              bool include_drift) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  require_matching_shape(night, calibration);
  Night out = night;
  for (std::size_t a = 0; a < na; ++a) {
    for (std::size_t c = 0; c < nc; ++c) {
      const ChannelCalibration& cal = calibration.units[a].channels[c];
      if (cal.solved && !(cal.gain > 0.0))
        throw InvalidInput(describe_value("gain of " + calibration.units[a].antenna, cal.gain) +
                           " must be > 0");
      if (!cal.solved) continue;
      for (std::size_t k = 0; k < nt; ++k) {
        double offset = cal.offset_k, gain = cal.gain;
        if (include_drift && calibration.units[a].drifting) {
          const double tau_h = (night.radiometer.time_s[k] - calibration.reference_time_s) / 3600.0;
          offset += cal.offset_drift_k_per_h * tau_h;
          gain += cal.gain_drift_per_h * tau_h;
        }
        double& v = out.radiometer.brightness_k[(a * nt + k) * nc + c];
        v = (v - offset) / gain;
      }
    }
  }
  return out;
}

Night apply_cross_calibration_at_mean_sky(const Night& night, const CrossCalibration& calibration) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  require_matching_shape(night, calibration);
  if (calibration.sky_k.size() != calibration.blocks * nc)
    throw InvalidInput(
        "cross-calibration's sky has " + std::to_string(calibration.sky_k.size()) +
        " values, not blocks x channels = " + std::to_string(calibration.blocks * nc));
  Night out = night;
  for (std::size_t c = 0; c < nc; ++c) {
    double sky_sum = 0.0;
    std::size_t blocks = 0;
    for (std::size_t b = 0; b < calibration.blocks; ++b) {
      const double sky = calibration.sky_k[b * nc + c];
      if (!std::isfinite(sky)) continue;
      sky_sum += sky;
      ++blocks;
    }
    if (blocks == 0) continue;  // the channel was not solved
    const double mean_sky_k = sky_sum / static_cast<double>(blocks);
    for (std::size_t a = 0; a < na; ++a) {
      const ChannelCalibration& cal = calibration.units[a].channels[c];
      if (!cal.solved) continue;
      const double shift_k = cal.offset_k + (cal.gain - 1.0) * mean_sky_k;
      for (std::size_t k = 0; k < nt; ++k)
        out.radiometer.brightness_k[(a * nt + k) * nc + c] -= shift_k;
    }
  }
  return out;
}

ResultGroup cross_calibration_result_group(const CrossCalibration& x) {
  ResultGroup g;
  g.stage = "cross_calibration";
  g.attributes["report"] = x.brief_report();
  g.attributes["reference"] = "relative to the array: mean offset 0 K, mean gain 1 per channel";
  g.attributes["reference_time_s"] = std::to_string(x.reference_time_s);
  const std::size_t na = x.antennas, nc = x.channels, nb = x.blocks;
  std::vector<double> offset, offset_sigma, gain, gain_sigma, offset_drift, gain_drift, chi2;
  std::vector<std::uint8_t> solved, disagrees, drifting;
  for (const UnitCalibration& u : x.units) {
    for (const ChannelCalibration& c : u.channels) {
      offset.push_back(c.offset_k);
      offset_sigma.push_back(c.offset_sigma_k);
      gain.push_back(c.gain);
      gain_sigma.push_back(c.gain_sigma);
      offset_drift.push_back(c.offset_drift_k_per_h);
      gain_drift.push_back(c.gain_drift_per_h);
      chi2.push_back(c.drift_chi2);
      solved.push_back(c.solved ? 1 : 0);
    }
    disagrees.push_back(u.disagrees ? 1 : 0);
    drifting.push_back(u.drifting ? 1 : 0);
  }
  g.datasets.push_back({"offset_k", {na, nc}, offset, "K", {}});
  g.datasets.push_back({"offset_sigma_k", {na, nc}, offset_sigma, "K", {}});
  g.datasets.push_back({"gain", {na, nc}, gain, "1", {}});
  g.datasets.push_back({"gain_sigma", {na, nc}, gain_sigma, "1", {}});
  g.datasets.push_back({"offset_drift_k_per_h", {na, nc}, offset_drift, "K/h", {}});
  g.datasets.push_back({"gain_drift_per_h", {na, nc}, gain_drift, "1/h", {}});
  g.datasets.push_back({"drift_chi2", {na, nc}, chi2, "1", {}});
  g.datasets.push_back({"solved", {na, nc}, solved, "1", {}});
  g.datasets.push_back({"disagrees", {na}, disagrees, "1", {}});
  g.datasets.push_back({"drifting", {na}, drifting, "1", {}});
  g.datasets.push_back({"block_mid_s", {nb}, x.block_mid_s, "s", {}});
  g.datasets.push_back({"sky_k", {nb, nc}, x.sky_k, "K", {}});
  return g;
}

}  // namespace wvr
