#include "wvr/night_retrieval.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <map>
#include <memory>
#include <thread>
#include <type_traits>
#include <variant>

#include "core/result_field_io.hpp"
#include "core/statistics.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_sky_model.hpp"

namespace wvr {

std::string describe_retrieval_flags(std::uint8_t flags) {
  if (flags == 0) return "ok";
  static const std::pair<std::uint8_t, const char*> kNames[] = {
      {kFlagInvalidInFile, "invalid in file"},
      {kFlagBadBrightness, "bad brightness"},
      {kFlagOutOfDomain, "out of domain"},
      {kFlagNoWeather, "no weather"},
      {kFlagFitFailed, "fit failed"},
      {kFlagNoValidSamples, "no valid samples"},
      {kFlagElevationOutOfDomain, "elevation out of domain"}};
  std::string out;
  for (const auto& [bit, name] : kNames) {
    if ((flags & bit) == 0) continue;
    if (!out.empty()) out += ", ";
    out += name;
  }
  return out;
}

void NightRetrievalOptions::validate() const {
  require_in_range("coefficient_window_s", coefficient_window_s, 1e-3, 86400.0, "s");
  window_fit.validate();
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " is negative");
  make_absorption_model(absorption_model, 1.0, "absorption_model");  // throws for an unknown key
}

namespace {

// Surface temperature at each radiometer time from the weather series (linear, held at the
// ends); empty when the night has no weather.
std::vector<double> surface_temperature_at(const Night& night) {
  const NightWeather& w = night.weather;
  std::vector<double> out;
  if (w.time_s.empty()) return out;
  out.reserve(night.time_count());
  std::size_t j = 0;
  for (double t : night.radiometer.time_s) {
    while (j + 1 < w.time_s.size() && w.time_s[j + 1] <= t) ++j;
    if (t <= w.time_s.front() || j + 1 >= w.time_s.size()) {
      out.push_back(t <= w.time_s.front() ? w.temperature_k.front() : w.temperature_k.back());
      continue;
    }
    const double f = (t - w.time_s[j]) / (w.time_s[j + 1] - w.time_s[j]);
    out.push_back((1 - f) * w.temperature_k[j] + f * w.temperature_k[j + 1]);
  }
  return out;
}

}  // namespace

NightRetrieval retrieve_night(const Night& night,
                              const SiteParameters& site_in,
                              const NightRetrievalOptions& options) {
  options.validate();
  const auto start = std::chrono::steady_clock::now();
  const std::size_t na = night.antenna_count(), nt = night.time_count(), nc = night.channel_count();
  if (na == 0 || nt == 0 || nc == 0) {
    throw InvalidInput("night has no radiometer data (antennas " + std::to_string(na) +
                       ", samples " + std::to_string(nt) + ", channels " + std::to_string(nc) +
                       ")");
  }
  SiteParameters site = site_in;
  site.pwv_mm = 1.0;
  site.surface_relative_humidity_pct.reset();
  const RadiometerConfig& radiometer = night.radiometer.config;
  std::vector<double> noise;
  for (const RadiometerChannel& c : radiometer.channels) noise.push_back(std::max(c.noise_k, 1e-3));

  std::vector<double> surface_t = surface_temperature_at(night);
  const bool have_weather = !surface_t.empty();
  if (!have_weather) surface_t.assign(nt, site.surface_temperature_k);
  const auto [t_min_it, t_max_it] = std::minmax_element(surface_t.begin(), surface_t.end());
  const double t_lo = std::floor(*t_min_it) - 1.0, t_hi = std::ceil(*t_max_it) + 1.0;

  PwvTableOptions table_options = options.table;
  table_options.min_surface_temperature_k = t_lo;
  table_options.max_surface_temperature_k = t_hi;
  const SkyModel sky(make_absorption_model(options.absorption_model));
  const PwvTable table(site, radiometer, table_options, sky);

  // Full-fit models every 1 K: the window fit uses the nearest and the linear temperature term
  // for the remaining < 0.5 K.
  std::vector<std::unique_ptr<FastSkyModel>> models;
  FastSkyModelOptions fast_options;
  for (double t = t_lo; t <= t_hi + 1e-9; t += 1.0) {
    SiteParameters s = site;
    s.surface_temperature_k = t;
    models.push_back(
        std::make_unique<FastSkyModel>(make_parametric_profile(s), radiometer, sky, fast_options));
  }

  NightRetrieval out;
  out.antennas = na;
  out.samples = nt;
  out.channels = nc;
  out.model = sky.absorption_model().name();
  out.table_min_elevation_deg = table_options.min_elevation_deg;
  const double t0 = night.radiometer.time_s.front();
  const double t_end = night.radiometer.time_s.back();
  const double window = options.coefficient_window_s;
  const std::size_t nw = static_cast<std::size_t>(std::floor((t_end - t0) / window)) + 1;
  out.windows = nw;
  for (std::size_t w = 0; w < nw; ++w) {
    out.window_start_s.push_back(t0 + window * static_cast<double>(w));
    out.window_stop_s.push_back(t0 + window * static_cast<double>(w + 1));
  }
  out.pwv_mm.assign(na * nt, std::nan(""));
  out.pwv_sigma_mm.assign(na * nt, std::nan(""));
  out.chi2_per_dof.assign(na * nt, std::nan(""));
  out.flags.assign(na * nt, 0);
  out.window_pwv_mm.assign(na * nw, std::nan(""));
  out.window_pwv_sigma_mm.assign(na * nw, std::nan(""));
  out.window_chi2_per_dof.assign(na * nw, std::nan(""));
  out.window_liquid_kg_m2.assign(na * nw, 0.0);
  out.window_flags.assign(na * nw, 0);
  out.path_sensitivity_k_per_mm.assign(na * nw * nc, std::nan(""));
  out.combination_weight_mm_per_k.assign(na * nw * nc, std::nan(""));
  out.path_noise_mm.assign(na * nw, std::nan(""));
  out.window_model_brightness_k.assign(na * nw * nc, std::nan(""));
  out.window_wet_path_mm.assign(na * nw, std::nan(""));
  out.window_elevation_deg.assign(na * nw, std::nan(""));

  // Per thread and temperature node: a retriever and a model workspace.
  struct NodeTools {
    Retriever retriever;
    FastSkyModel::Workspace workspace;
  };
  auto process_antenna = [&](std::size_t a, std::map<std::size_t, NodeTools>& tools) {
    const std::span<const double> tb = night.antenna_brightness_k(a);
    const std::span<const std::uint8_t> valid = night.antenna_valid(a);
    const double dof = nc > 1 ? static_cast<double>(nc - 1) : 1.0;
    for (std::size_t k = 0; k < nt; ++k) {
      std::uint8_t& flag = out.flags[a * nt + k];
      if (!have_weather) flag |= kFlagNoWeather;
      if (valid[k] == 0) flag |= kFlagInvalidInFile;
      const std::span<const double> sample = tb.subspan(k * nc, nc);
      for (double v : sample) {
        if (!(v >= 0.0 && v < 400.0)) flag |= kFlagBadBrightness;
      }
      if (flag & (kFlagInvalidInFile | kFlagBadBrightness)) continue;
      const double el = night.pointing.elevation_deg[a * nt + k];
      const PwvTableResult r = table.invert(sample, noise, el, surface_t[k]);
      if (r.status == PwvTableStatus::kOk) {
        out.pwv_mm[a * nt + k] = r.pwv_mm;
        out.pwv_sigma_mm[a * nt + k] = r.pwv_sigma_mm;
        out.chi2_per_dof[a * nt + k] = r.chi2 / dof;
      } else if (r.status == PwvTableStatus::kBrightnessInvalid) {
        flag |= kFlagBadBrightness;
      } else if (r.status == PwvTableStatus::kNoSensitiveChannel) {
        flag |= kFlagFitFailed;
      } else if (r.status == PwvTableStatus::kElevationOutOfDomain) {
        flag |= kFlagOutOfDomain | kFlagElevationOutOfDomain;
      } else {
        flag |= kFlagOutOfDomain;
      }
    }
    // Coefficient windows.
    std::vector<double> mean(nc), window_noise(nc), d_pwv(nc), tb_model(nc), pwvs, chis;
    std::size_t k = 0;
    for (std::size_t w = 0; w < nw; ++w) {
      std::fill(mean.begin(), mean.end(), 0.0);
      double el_sum = 0.0, t_sum = 0.0;
      std::size_t n = 0;
      pwvs.clear();
      chis.clear();
      for (; k < nt && night.radiometer.time_s[k] < out.window_stop_s[w]; ++k) {
        if (out.flags[a * nt + k] & kRetrievalUnusable) continue;
        for (std::size_t c = 0; c < nc; ++c) mean[c] += tb[k * nc + c];
        el_sum += night.pointing.elevation_deg[a * nt + k];
        t_sum += surface_t[k];
        pwvs.push_back(out.pwv_mm[a * nt + k]);
        chis.push_back(out.chi2_per_dof[a * nt + k]);
        ++n;
      }
      const std::size_t aw = a * nw + w;
      if (n == 0) {
        out.window_flags[aw] |= kFlagNoValidSamples;
        continue;
      }
      if (!have_weather) out.window_flags[aw] |= kFlagNoWeather;
      for (std::size_t c = 0; c < nc; ++c) {
        mean[c] /= static_cast<double>(n);
        window_noise[c] = noise[c] / std::sqrt(static_cast<double>(n));
      }
      const double el = el_sum / static_cast<double>(n);
      const double temperature = t_sum / static_cast<double>(n);
      const std::size_t node =
          std::min(models.size() - 1, static_cast<std::size_t>(std::lround(temperature - t_lo)));
      const FastSkyModel& model = *models[node];
      auto it = tools.find(node);
      if (it == tools.end()) {
        it = tools
                 .emplace(node,
                          NodeTools{Retriever(model, options.window_fit), model.make_workspace()})
                 .first;
      }
      RetrievalInput input{mean, window_noise, el, detail::finite_median(pwvs),
                           temperature - (t_lo + static_cast<double>(node))};
      const RetrievalResult fit = it->second.retriever.fit(input);
      out.window_chi2_per_dof[aw] = detail::finite_median(chis);
      if (!fit.ok()) {
        out.window_flags[aw] |= kFlagFitFailed;
        continue;
      }
      out.window_pwv_mm[aw] = fit.pwv_mm;
      out.window_pwv_sigma_mm[aw] = fit.pwv_sigma_mm;
      out.window_liquid_kg_m2[aw] = fit.liquid_kg_m2;
      model.evaluate(FastSkyState{fit.pwv_mm, el, fit.liquid_kg_m2}, it->second.workspace, tb_model,
                     FastSkyJacobians{d_pwv, {}, {}});
      const double wet_mm_per_pwv = model.wet_path_per_pwv_m_per_mm(el) * 1000.0;
      out.window_wet_path_mm[aw] = fit.pwv_mm * wet_mm_per_pwv;
      out.window_elevation_deg[aw] = el;
      for (std::size_t c = 0; c < nc; ++c)
        out.window_model_brightness_k[aw * nc + c] = fit.model_brightness_k[c];
      double information = 0.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const double s = d_pwv[c] / wet_mm_per_pwv;
        out.path_sensitivity_k_per_mm[aw * nc + c] = s;
        information += s * s / (noise[c] * noise[c]);
      }
      for (std::size_t c = 0; c < nc; ++c) {
        out.combination_weight_mm_per_k[aw * nc + c] =
            out.path_sensitivity_k_per_mm[aw * nc + c] / (noise[c] * noise[c]) / information;
      }
      out.path_noise_mm[aw] = 1.0 / std::sqrt(information);
    }
  };

  const unsigned hardware = std::max(1u, std::thread::hardware_concurrency());
  const std::size_t thread_count = std::min<std::size_t>(
      na, options.threads > 0 ? static_cast<std::size_t>(options.threads) : hardware);
  std::vector<std::thread> workers;
  for (std::size_t th = 0; th < thread_count; ++th) {
    workers.emplace_back([&, th] {
      std::map<std::size_t, NodeTools> tools;
      for (std::size_t a = th; a < na; a += thread_count) process_antenna(a, tools);
    });
  }
  for (std::thread& worker : workers) worker.join();
  out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

std::span<const ResultArrayField<NightRetrieval>> night_retrieval_fields() {
  using R = NightRetrieval;
  static const ResultArrayField<R> fields[] = {
      {"pwv_mm", &R::pwv_mm, "at", "mm", "zenith PWV of each sample (table inversion)"},
      {"pwv_sigma_mm", &R::pwv_sigma_mm, "at", "mm", "1-sigma error of pwv_mm"},
      {"chi2_per_dof", &R::chi2_per_dof, "at", "1", "chi-square per degree of freedom"},
      {"flags", &R::flags, "at", "1", "RetrievalFlag bits (0 = usable)"},
      {"window_start_s", &R::window_start_s, "w", "s", "start of each coefficient window"},
      {"window_stop_s", &R::window_stop_s, "w", "s", "end of each coefficient window"},
      {"window_pwv_mm", &R::window_pwv_mm, "aw", "mm", "PWV of the window fit"},
      {"window_pwv_sigma_mm", &R::window_pwv_sigma_mm, "aw", "mm", "1-sigma error"},
      {"window_chi2_per_dof", &R::window_chi2_per_dof, "aw", "1", "window fit chi-square"},
      {"window_liquid_kg_m2", &R::window_liquid_kg_m2, "aw", "kg/m^2", "fitted liquid water"},
      {"window_flags", &R::window_flags, "aw", "1", "RetrievalFlag bits of the window fit"},
      {"path_sensitivity_k_per_mm", &R::path_sensitivity_k_per_mm, "awc", "K/mm",
       "dT/dL of each channel at the window's state"},
      {"combination_weight_mm_per_k", &R::combination_weight_mm_per_k, "awc", "mm/K",
       "minimum-variance path weights"},
      {"path_noise_mm", &R::path_noise_mm, "aw", "mm", "white path noise per sample"},
      {"window_model_brightness_k", &R::window_model_brightness_k, "awc", "K",
       "model brightness at the window's fitted state"},
      {"window_wet_path_mm", &R::window_wet_path_mm, "aw", "mm", "slant wet path there"},
      {"window_elevation_deg", &R::window_elevation_deg, "aw", "deg",
       "mean elevation of the window's samples"},
      {"table_min_elevation_deg", &R::table_min_elevation_deg, "", "deg",
       "lowest elevation the table inverts (below it: elevation out of domain)", true},
  };
  return fields;
}

std::size_t axis_extent(const NightRetrieval& r, char axis) {
  switch (axis) {
    case 'a':
      return r.antennas;
    case 't':
      return r.samples;
    case 'w':
      return r.windows;
    case 'c':
      return r.channels;
  }
  throw InvalidInput(std::string("NightRetrieval has no axis '") + axis + "'");
}

ResultGroup to_result_group(const NightRetrieval& r, const Night& night) {
  ResultGroup g;
  g.stage = "retrieval";
  g.attributes["model"] = r.model;
  g.attributes["method"] = "per sample: table inversion; per window: full fit of the window mean";
  g.attributes["flag_bits"] =
      "1 invalid in file, 2 bad brightness, 4 out of domain, 8 no weather, 16 fit failed, 32 no "
      "valid samples, 64 elevation out of domain (with 4)";
  detail::write_result_fields(g, r, night_retrieval_fields());
  (void)night;
  return g;
}

NightRetrieval retrieval_from_result_group(const ResultGroup& g) {
  const ResultDataset* pwv = g.find("pwv_mm");
  const ResultDataset* weights = g.find("combination_weight_mm_per_k");
  if (pwv == nullptr || pwv->shape.size() != 2 || weights == nullptr ||
      weights->shape.size() != 3) {
    throw InvalidInput(
        "/results/" + g.stage +
        " is not a retrieval (pwv_mm [A, T] and combination_weight_mm_per_k [A, W, C] needed)");
  }
  NightRetrieval r;
  r.antennas = pwv->shape[0];
  r.samples = pwv->shape[1];
  r.windows = weights->shape[1];
  r.channels = weights->shape[2];
  detail::read_result_fields(g, r, night_retrieval_fields());
  if (const auto it = g.attributes.find("model"); it != g.attributes.end()) r.model = it->second;
  return r;
}

}  // namespace wvr
