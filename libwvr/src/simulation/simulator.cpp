#include "wvr/simulator.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numbers>
#include <thread>

#include "core/gaussian_random.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/constants.hpp"
#include "wvr/dispersion.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_sky_model.hpp"
#include "wvr/water_vapour.hpp"

namespace wvr {
namespace {

using Clock = std::chrono::steady_clock;
constexpr double kDeg = std::numbers::pi / 180.0;

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// Per-time quantities shared by every antenna (the source is far away: one pointing).
struct TimeGeometry {
  std::vector<double> time_s, elevation_deg, azimuth_deg, airmass, wet_path_per_pwv_m_per_mm;
  std::vector<double> pwv_mean_mm, liquid_kg_m2;
  std::vector<std::vector<double>> layer_factor;                   // [layer][time]
  std::vector<std::vector<double>> pierce_east_m, pierce_north_m;  // [layer][time] offsets
};

std::vector<Scan> make_scans(const Scenario& s) {
  std::vector<Scan> scans;
  const ObservingPattern& o = s.observing;
  const double end = s.duration_s;
  for (double t = 0.0; t < end;) {
    const double cal_stop = std::min(t + o.calibrator_scan_s, end);
    scans.push_back({t, cal_stop, ScanIntent::kCalibrator, o.calibrator, o.obs_freq_ghz});
    t = cal_stop;
    if (o.target_scan_s <= 0.0 || t >= end) continue;
    const double target_stop = std::min(t + o.target_scan_s, end);
    scans.push_back({t, target_stop, ScanIntent::kTarget, o.target, o.obs_freq_ghz});
    t = target_stop;
  }
  return scans;
}

// Windows where a labelled layer's schedule factor exceeds 0.5, sampled on the time grid.
void add_turbulence_episodes(const Scenario& s, const TimeGeometry& g, NightTruth& truth) {
  for (std::size_t l = 0; l < s.turbulence.size(); ++l) {
    if (s.turbulence[l].label.empty()) continue;
    bool open = false;
    double start = 0.0;
    for (std::size_t k = 0; k < g.time_s.size(); ++k) {
      const bool on = g.layer_factor[l][k] > 0.5;
      if (on && !open) start = g.time_s[k];
      if (!on && open) truth.episodes.push_back({start, g.time_s[k], -1, s.turbulence[l].label});
      open = on;
    }
    if (open) truth.episodes.push_back({start, g.time_s.back(), -1, s.turbulence[l].label});
  }
}

void apply_faults(const Scenario& s,
                  std::size_t antenna,
                  std::span<const double> time_s,
                  std::size_t channels,
                  std::span<double> brightness,  // [time, channel] of this antenna
                  std::span<std::uint8_t> valid,
                  detail::GaussianSource& random) {
  for (const RadiometerFault& f : s.faults) {
    if (static_cast<std::size_t>(f.antenna) != antenna) continue;
    const std::size_t c0 = f.channel < 0 ? 0 : static_cast<std::size_t>(f.channel);
    const std::size_t c1 = f.channel < 0 ? channels : c0 + 1;
    std::vector<double> stuck_value;
    for (std::size_t k = 0; k < time_s.size(); ++k) {
      const double t = time_s[k];
      if (t < f.start_s || t > f.stop_s) continue;
      double* row = &brightness[k * channels];
      switch (f.kind) {
        case FaultKind::kSpike:
          // 2 % of samples jump by +/- magnitude (spikes both ways).
          if (random.uniform() < 0.02) {
            const double sign = random.uniform() < 0.5 ? -1.0 : 1.0;
            for (std::size_t c = c0; c < c1; ++c) row[c] += sign * f.magnitude;
          }
          break;
        case FaultKind::kGainDrift:
          for (std::size_t c = c0; c < c1; ++c)
            row[c] *= 1.0 + f.magnitude * (t - f.start_s) / 3600.0;
          break;
        case FaultKind::kStuckChannel:
          if (stuck_value.empty()) stuck_value.assign(row + c0, row + c1);
          for (std::size_t c = c0; c < c1; ++c) row[c] = stuck_value[c - c0];
          break;
        case FaultKind::kDeadChannel:
          for (std::size_t c = c0; c < c1; ++c) row[c] = std::nan("");
          break;
        case FaultKind::kDropout:
          for (std::size_t c = 0; c < channels; ++c) row[c] = std::nan("");
          valid[k] = 0;
          break;
      }
    }
  }
}

// Calibration errors per [antenna, channel], drawn from the scenario's spreads.
struct CalibrationErrors {
  std::vector<double> offset_k, gain, offset_drift_k_per_hour, gain_drift_per_hour;
};

CalibrationErrors draw_calibration_errors(const Scenario& s,
                                          std::size_t antennas,
                                          std::size_t channels) {
  const CalibrationErrorSpec& spec = s.true_sky.calibration;
  CalibrationErrors out;
  // Its own stream: enabling calibration errors leaves the sky noise of a scenario unchanged.
  detail::GaussianSource random(s.seed * 2654435761ULL + 97ULL);
  for (std::size_t i = 0; i < antennas * channels; ++i) {
    out.offset_k.push_back(spec.offset_sigma_k * random.next());
    out.gain.push_back(spec.gain_sigma * random.next());
    out.offset_drift_k_per_hour.push_back(spec.offset_drift_sigma_k_per_hour * random.next());
    out.gain_drift_per_hour.push_back(spec.gain_drift_sigma_per_hour * random.next());
  }
  return out;
}

// reported = (1 + gain + gain_drift h) T + offset + offset_drift h, h = hours since the start.
void apply_calibration_errors(const CalibrationErrors& errors,
                              std::size_t antenna,
                              std::span<const double> time_s,
                              std::size_t channels,
                              std::span<double> brightness) {  // [time, channel] of this antenna
  for (std::size_t k = 0; k < time_s.size(); ++k) {
    const double hours = (time_s[k] - time_s.front()) / 3600.0;
    for (std::size_t c = 0; c < channels; ++c) {
      const std::size_t at = antenna * channels + c;
      double& tb = brightness[k * channels + c];
      tb = (1.0 + errors.gain[at] + errors.gain_drift_per_hour[at] * hours) * tb +
           errors.offset_k[at] + errors.offset_drift_k_per_hour[at] * hours;
    }
  }
}

std::string antenna_name(std::size_t i) {
  const std::string number = std::to_string(i + 1);
  return "CV" + std::string(number.size() < 2 ? 2 - number.size() : 0, '0') + number;
}

}  // namespace

Night simulate_night(const Scenario& s,
                     const SimulationOptions& options,
                     SimulationReport* report) {
  s.validate();
  SimulationReport timing;
  const std::size_t nt = s.time_count();
  const std::size_t nc = s.radiometer.channels.size();
  const auto positions = make_array_layout(s.array, s.seed);
  const std::size_t na = positions.size();

  // Sky model: the true sky's profile shape (the site's unless the scenario's true sky says
  // otherwise; at 1 mm, only its shape matters) and a fast model whose PWV domain covers the
  // night.
  SiteParameters site = s.true_sky.apply_to(s.site.parameters);
  site.pwv_mm = 1.0;
  site.surface_relative_humidity_pct.reset();
  const AtmosphereProfile shape = make_parametric_profile(site);
  const double pwv_end = s.pwv_mm + s.pwv_drift_mm_per_hour * s.duration_s / 3600.0;
  FastSkyModelOptions fast_options;
  fast_options.max_pwv_mm = std::max(12.0, 2.0 * std::max(s.pwv_mm, pwv_end) + 2.0);
  fast_options.cloud_base_above_ground_m = s.cloud_base_above_ground_m;
  fast_options.cloud_thickness_m = s.cloud_thickness_m;
  const SkyModel sky(
      make_absorption_model(s.true_sky.absorption_model, s.true_sky.water_continuum_scale));
  const FastSkyModel fast(shape, s.radiometer, sky, fast_options);
  const double wet_per_pwv_zenith = fast.wet_path_per_pwv_m_per_mm(90.0);

  // Time geometry.
  TimeGeometry g;
  const std::size_t nl = s.turbulence.size();
  g.layer_factor.assign(nl, std::vector<double>(nt));
  g.pierce_east_m.assign(nl, std::vector<double>(nt));
  g.pierce_north_m.assign(nl, std::vector<double>(nt));
  for (std::size_t k = 0; k < nt; ++k) {
    const double t = static_cast<double>(k) * s.integration_s;
    const HorizonPosition p = source_position(s.site.latitude_deg, s.source, t);
    if (p.elevation_deg < fast.min_elevation_deg() || p.elevation_deg > 90.0) {
      throw InvalidInput("source: elevation_deg = " + std::to_string(p.elevation_deg) +
                         " at t = " + std::to_string(t) + " s is below the sky model's " +
                         std::to_string(fast.min_elevation_deg()) + " deg minimum");
    }
    g.time_s.push_back(t);
    g.elevation_deg.push_back(p.elevation_deg);
    g.azimuth_deg.push_back(p.azimuth_deg);
    const double el = p.elevation_deg * kDeg;
    g.airmass.push_back(1.0 / std::sin(el));
    g.wet_path_per_pwv_m_per_mm.push_back(fast.wet_path_per_pwv_m_per_mm(p.elevation_deg));
    g.pwv_mean_mm.push_back(std::max(0.0, s.pwv_mm + s.pwv_drift_mm_per_hour * t / 3600.0));
    double lwp = 0.0;
    for (const CloudEpisode& c : s.clouds) lwp += c.liquid_water_path_at(t);
    g.liquid_kg_m2.push_back(std::min(lwp, fast_options.max_liquid_water_path_kg_m2));
    for (std::size_t l = 0; l < nl; ++l) {
      g.layer_factor[l][k] = s.turbulence[l].factor_at(t);
      const double offset = s.turbulence[l].layer.height_m / std::tan(el);
      g.pierce_east_m[l][k] = offset * std::sin(p.azimuth_deg * kDeg);
      g.pierce_north_m[l][k] = offset * std::cos(p.azimuth_deg * kDeg);
    }
  }

  // Screens, planned to cover every pierce point over the night.
  auto start_screens = Clock::now();
  std::vector<PhaseScreen> screens;
  ScreenOptions screen_options;
  screen_options.spacing_m = s.screen_spacing_m;
  for (std::size_t l = 0; l < nl; ++l) {
    std::vector<double> east, north;
    const std::size_t stride = std::max<std::size_t>(1, nt / 64);
    for (std::size_t k = 0; k < nt; k += stride) {
      for (const auto& p : positions) {
        east.push_back(p[0] + g.pierce_east_m[l][k]);
        north.push_back(p[1] + g.pierce_north_m[l][k]);
      }
    }
    for (const auto& p : positions) {
      east.push_back(p[0] + g.pierce_east_m[l][nt - 1]);
      north.push_back(p[1] + g.pierce_north_m[l][nt - 1]);
    }
    const ScreenGrid grid =
        plan_screen_grid(s.turbulence[l].layer, east, north, 0.0, g.time_s.back(), screen_options);
    screens.emplace_back(s.turbulence[l].layer, grid, s.seed * 1000003ULL + l + 1,
                         screen_options.subharmonic_levels);
    timing.screen_bytes += screens.back().memory_bytes();
  }
  timing.screen_seconds = seconds_since(start_screens);

  Night night;
  night.time_epoch_utc = s.start_utc;
  for (std::size_t a = 0; a < na; ++a) {
    night.array.antenna_names.push_back(antenna_name(a));
    night.array.position_enu_m.push_back(positions[a]);
    night.array.radiometer_ids.push_back("WVR-" + std::to_string(101 + a));
  }
  night.array.reference_latitude_deg = s.site.latitude_deg;
  night.array.reference_height_m = s.site.parameters.altitude_m;
  // The retrieval model's site: the one the scenario names (its sky may differ from it).
  night.site =
      NightSite{s.site, "simulated: scenario '" + s.name + "', site '" + s.site.name + "'"};
  night.radiometer.config = s.radiometer;
  night.radiometer.time_s = g.time_s;
  night.radiometer.brightness_k.assign(na * nt * nc, 0.0);
  night.radiometer.valid.assign(na * nt, 1);
  night.pointing.elevation_deg.resize(na * nt);
  night.pointing.azimuth_deg.resize(na * nt);
  NightTruth truth;
  truth.wet_path_m.resize(na * nt);
  truth.dry_path_m.resize(na * nt);
  truth.pwv_mm.resize(na * nt);

  const CalibrationErrors calibration = draw_calibration_errors(s, na, nc);

  // Brightness and truth, antennas split over threads; each antenna has its own random
  // stream, so results do not depend on the thread count.
  auto start_brightness = Clock::now();
  auto simulate_antenna = [&](std::size_t a, FastSkyModel::Workspace& ws) {
    detail::GaussianSource random(s.seed * 7919ULL + 104729ULL * (a + 1));
    std::vector<double> tb(nc);
    for (std::size_t k = 0; k < nt; ++k) {
      double wet_zenith = 0.0, dry_zenith = 0.0;
      for (std::size_t l = 0; l < nl; ++l) {
        const double path =
            g.layer_factor[l][k] * screens[l].path_m(positions[a][0] + g.pierce_east_m[l][k],
                                                     positions[a][1] + g.pierce_north_m[l][k],
                                                     g.time_s[k]);
        (s.turbulence[l].layer.kind == LayerKind::kWet ? wet_zenith : dry_zenith) += path;
      }
      const double pwv = std::max(0.0, g.pwv_mean_mm[k] + wet_zenith / wet_per_pwv_zenith);
      const std::size_t at = a * nt + k;
      truth.pwv_mm[at] = pwv;
      truth.wet_path_m[at] = pwv * g.wet_path_per_pwv_m_per_mm[k];
      truth.dry_path_m[at] = dry_zenith * g.airmass[k];
      night.pointing.elevation_deg[at] = g.elevation_deg[k];
      night.pointing.azimuth_deg[at] = g.azimuth_deg[k];
      const FastModelStatus status =
          fast.evaluate(FastSkyState{pwv, g.elevation_deg[k], g.liquid_kg_m2[k]}, ws, tb);
      double* row = &night.radiometer.brightness_k[at * nc];
      for (std::size_t c = 0; c < nc; ++c) {
        row[c] = status == FastModelStatus::kOk
                     ? tb[c] + s.radiometer.channels[c].noise_k * random.next()
                     : std::nan("");
      }
      if (status != FastModelStatus::kOk) night.radiometer.valid[at] = 0;
    }
    apply_calibration_errors(
        calibration, a, g.time_s, nc,
        std::span<double>(night.radiometer.brightness_k).subspan(a * nt * nc, nt * nc));
    apply_faults(s, a, g.time_s, nc,
                 std::span<double>(night.radiometer.brightness_k).subspan(a * nt * nc, nt * nc),
                 std::span<std::uint8_t>(night.radiometer.valid).subspan(a * nt, nt), random);
  };
  const unsigned hardware = std::max(1u, std::thread::hardware_concurrency());
  const std::size_t thread_count = std::min<std::size_t>(
      na, options.threads > 0 ? static_cast<std::size_t>(options.threads) : hardware);
  std::vector<std::thread> workers;
  for (std::size_t w = 0; w < thread_count; ++w) {
    workers.emplace_back([&, w] {
      FastSkyModel::Workspace ws = fast.make_workspace();
      for (std::size_t a = w; a < na; a += thread_count) simulate_antenna(a, ws);
    });
  }
  for (std::thread& worker : workers) worker.join();
  timing.brightness_seconds = seconds_since(start_brightness);

  // Scans and calibrator phases.
  auto start_phases = Clock::now();
  night.scans = make_scans(s);
  const double radians_per_m =
      2.0 * std::numbers::pi * s.observing.obs_freq_ghz * 1e9 / constants::speed_of_light_m_per_s;
  const double noise_rad = s.observing.thermal_phase_noise_deg * kDeg;
  // Wet path is dispersive near water lines (wvr/dispersion.hpp); dry path is not.
  const double wet_factor = wet_phase_per_path_factor(s.observing.obs_freq_ghz, shape);
  detail::GaussianSource phase_noise(s.seed * 15485863ULL + 3);
  std::size_t scan = 0;
  for (std::size_t k = 0; k < nt; ++k) {
    const double t = g.time_s[k];
    while (scan < night.scans.size() && night.scans[scan].stop_s <= t) ++scan;
    if (scan >= night.scans.size() || night.scans[scan].intent != ScanIntent::kCalibrator ||
        t < night.scans[scan].start_s) {
      continue;
    }
    for (std::size_t a = 0; a < na; ++a) {
      for (std::size_t b = a + 1; b < na; ++b) {
        if (!s.observing.all_baselines && a != 0) break;
        const double path_a =
            wet_factor * truth.wet_path_m[a * nt + k] + truth.dry_path_m[a * nt + k];
        const double path_b =
            wet_factor * truth.wet_path_m[b * nt + k] + truth.dry_path_m[b * nt + k];
        double phase = radians_per_m * (path_b - path_a) + noise_rad * phase_noise.next();
        phase = std::remainder(phase, 2.0 * std::numbers::pi);  // (-pi, pi]
        if (phase <= -std::numbers::pi) phase += 2.0 * std::numbers::pi;
        night.calibrator_phases.time_s.push_back(t);
        night.calibrator_phases.antenna_pair.push_back(
            {static_cast<std::int32_t>(a), static_cast<std::int32_t>(b)});
        night.calibrator_phases.phase_rad.push_back(phase);
        night.calibrator_phases.freq_ghz.push_back(s.observing.obs_freq_ghz);
      }
    }
  }
  timing.phase_seconds = seconds_since(start_phases);

  // Surface weather once a minute, consistent with the vapour column.
  const double surface_vapour_per_pwv = shape.layers().front().vapour_density_kg_m3;  // at 1 mm
  for (double t = 0.0; t <= g.time_s.back(); t += 60.0) {
    const double pwv = std::max(0.0, s.pwv_mm + s.pwv_drift_mm_per_hour * t / 3600.0);
    const double temperature = site.surface_temperature_k;
    const double e = vapour_pressure_hpa(surface_vapour_per_pwv * pwv, temperature);
    night.weather.time_s.push_back(t);
    night.weather.temperature_k.push_back(temperature);
    night.weather.pressure_hpa.push_back(site.surface_pressure_hpa);
    night.weather.relative_humidity_pct.push_back(
        std::min(100.0, 100.0 * e / saturation_vapour_pressure_hpa(temperature)));
  }

  for (const CloudEpisode& c : s.clouds)
    truth.episodes.push_back({c.start_s, c.stop_s, -1, "cloud"});
  for (const RadiometerFault& f : s.faults) {
    truth.episodes.push_back(
        {f.start_s, f.stop_s, f.antenna, "radiometer fault: " + to_string(f.kind)});
  }
  add_turbulence_episodes(s, g, truth);
  truth.sky_differences = s.true_sky.describe();
  if (s.true_sky.calibration.any()) {
    truth.calibration_offset_k = calibration.offset_k;
    truth.calibration_gain = calibration.gain;
    truth.calibration_offset_drift_k_per_hour = calibration.offset_drift_k_per_hour;
    truth.calibration_gain_drift_per_hour = calibration.gain_drift_per_hour;
  }
  night.truth = std::move(truth);
  if (report != nullptr) *report = timing;
  return night;
}

}  // namespace wvr
