// MeasurementSet -> night: metadata, one chunked pass over the main table, then pointing,
// weather, the channel layout and the site record.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "archive/casacore_guard.hpp"
#include "archive/geodesy.hpp"
#include "archive/ms_main_table.hpp"
#include "archive/ms_metadata.hpp"
#include "archive/ms_pointing.hpp"
#include "archive/ms_weather.hpp"
#include "wvr/error.hpp"
#include "wvr/measurement_set.hpp"
#include "wvr/night_site.hpp"
#include "wvr/planck.hpp"

namespace wvr {
namespace {

constexpr double kWaterLineGhz = 183.31;
constexpr double kSecondsPerDay = 86400.0;

// "YYYY-MM-DDT00:00:00Z" of an MJD day number (MJD 0 = 1858-11-17).
std::string iso_date_of_mjd_day(long long mjd_day) {
  using namespace std::chrono;
  const year_month_day ymd{sys_days{year{1858} / November / 17} + days{mjd_day}};
  char text[32];
  std::snprintf(text, sizeof text, "%04d-%02u-%02uT00:00:00Z", static_cast<int>(ymd.year()),
                static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()));
  return text;
}

// Channel layout read from the window: double-sideband channels about an LO on the 183.31 GHz
// line, each CHAN_FREQ being the upper-sideband centre (ARCHIVE.md); noise per sample is
// estimated from the data afterwards.
RadiometerConfig layout_from_window(const archive::SpectralWindow& w) {
  RadiometerConfig config;
  config.name = "radiometer window '" + w.name + "'";
  config.lo_freq_ghz = kWaterLineGhz;
  for (std::size_t c = 0; c < w.chan_freq_ghz.size(); ++c) {
    RadiometerChannel ch;
    ch.name = "c" + std::to_string(c + 1);
    ch.if_centre_ghz = std::abs(w.chan_freq_ghz[c] - kWaterLineGhz);
    ch.bandwidth_ghz = std::abs(w.chan_width_ghz[c]);
    ch.sideband = Sideband::kDouble;
    ch.sideband_ratio = 1.0;
    config.channels.push_back(ch);
  }
  return config;
}

// Rms noise of one sample per channel: median over antennas of the rms of successive
// differences of valid samples divided by sqrt(2) (white noise dominates at the sample rate).
void estimate_channel_noise(const Night& night, RadiometerConfig& config) {
  const std::size_t na = night.antenna_count(), nt = night.time_count(),
                    nc = config.channels.size();
  for (std::size_t c = 0; c < nc; ++c) {
    std::vector<double> per_antenna;
    for (std::size_t a = 0; a < na; ++a) {
      double s2 = 0.0;
      std::size_t n = 0;
      for (std::size_t k = 1; k < nt; ++k) {
        if (!night.radiometer.valid[a * nt + k] || !night.radiometer.valid[a * nt + k - 1])
          continue;
        const double d = night.radiometer.brightness_k[(a * nt + k) * nc + c] -
                         night.radiometer.brightness_k[(a * nt + k - 1) * nc + c];
        s2 += d * d;
        ++n;
      }
      if (n > 0) per_antenna.push_back(std::sqrt(s2 / static_cast<double>(n) / 2.0));
    }
    if (per_antenna.empty() || !(per_antenna[per_antenna.size() / 2] > 0.0)) {
      throw InvalidInput("radiometer channel " + config.channels[c].name +
                         ": noise_k cannot be estimated from the data (fewer than two "
                         "consecutive valid samples); give a radiometer file");
    }
    std::nth_element(per_antenna.begin(), per_antenna.begin() + per_antenna.size() / 2,
                     per_antenna.end());
    config.channels[c].noise_k = per_antenna[per_antenna.size() / 2];
  }
}

NightArray array_from_antennas(const archive::MsMetadata& m,
                               const std::optional<std::array<double, 3>>& centre) {
  NightArray array;
  archive::Geodetic origin;
  if (centre) {
    origin = {(*centre)[0], (*centre)[1], (*centre)[2]};
  } else {
    std::array<double, 3> mean{0, 0, 0};
    for (const auto& p : m.antenna_itrf_m)
      for (int i = 0; i < 3; ++i) mean[i] += p[i] / static_cast<double>(m.antenna_itrf_m.size());
    origin = archive::geodetic_from_itrf(mean);
  }
  array.reference_latitude_deg = origin.latitude_deg;
  array.reference_longitude_deg = origin.longitude_deg;
  array.reference_height_m = origin.height_m;
  for (std::size_t a = 0; a < m.antenna_names.size(); ++a) {
    array.antenna_names.push_back(m.antenna_names[a]);
    array.position_enu_m.push_back(archive::enu_from_itrf(m.antenna_itrf_m[a], origin));
    array.radiometer_ids.push_back("");
  }
  return array;
}

std::vector<Scan> scans_from_records(const archive::MainTableContents& main,
                                     const archive::MsMetadata& m,
                                     double epoch_mjd_s,
                                     const std::string& label,
                                     std::vector<std::string>& notes) {
  std::vector<std::pair<int, archive::ScanRecord>> records(main.scans.begin(), main.scans.end());
  std::sort(records.begin(), records.end(), [](const auto& x, const auto& y) {
    return x.second.start_mjd_s < y.second.start_mjd_s;
  });
  std::vector<Scan> scans;
  std::size_t other = 0;
  for (std::size_t i = 0; i < records.size(); ++i) {
    const auto& [number, r] = records[i];
    if (i > 0 && r.start_mjd_s < records[i - 1].second.stop_mjd_s - 1e-6) {
      throw InvalidInput(label + ": SCAN_NUMBER " + std::to_string(number) +
                         " overlaps SCAN_NUMBER " + std::to_string(records[i - 1].first) +
                         " in time; a night needs scans that follow one another");
    }
    Scan s;
    s.start_s = r.start_mjd_s - epoch_mjd_s;
    s.stop_s = r.stop_mjd_s - epoch_mjd_s;
    if (i > 0) s.start_s = std::max(s.start_s, scans.back().stop_s);
    s.intent = r.intent == archive::StateIntent::kCalibrator ? ScanIntent::kCalibrator
                                                             : ScanIntent::kTarget;
    if (r.intent == archive::StateIntent::kOther) ++other;
    s.source = r.field >= 0 && static_cast<std::size_t>(r.field) < m.fields.size() &&
                       !m.fields[static_cast<std::size_t>(r.field)].name.empty()
                   ? m.fields[static_cast<std::size_t>(r.field)].name
                   : "field " + std::to_string(r.field);
    s.obs_freq_ghz = m.spectral_windows[static_cast<std::size_t>(r.spectral_window)].mean_freq_ghz;
    scans.push_back(s);
  }
  if (other > 0) {
    notes.push_back(std::to_string(other) +
                    " scans have no CALIBRATE_PHASE or OBSERVE_TARGET intent in STATE: taken "
                    "as target scans");
  }
  return scans;
}

MsImport import_unchecked(const std::filesystem::path& ms, const MsImportOptions& options) {
  const std::string label = ms.string();
  MsImport result;
  std::vector<std::string>& notes = result.notes;
  const archive::MsMetadata m = archive::read_ms_metadata(ms);
  const int window = archive::find_radiometer_window(
      m, options.radiometer_window, options.radiometer_search_halfwidth_ghz, label);
  const archive::SpectralWindow& rad_window = m.spectral_windows[static_cast<std::size_t>(window)];
  const std::size_t na = m.antenna_names.size(), nc = rad_window.chan_freq_ghz.size();
  if (options.reference_antenna >= static_cast<int>(na)) {
    throw InvalidInput("reference_antenna = " + std::to_string(options.reference_antenna) +
                       " is outside ANTENNA's " + std::to_string(na) + " rows");
  }
  RadiometerConfig config =
      options.radiometer ? *options.radiometer : layout_from_window(rad_window);
  if (config.channels.size() != nc) {
    throw InvalidInput("radiometer file has " + std::to_string(config.channels.size()) +
                       " channels, the radiometer window of " + label + " " + std::to_string(nc));
  }

  const archive::MainTableContents main =
      archive::read_main_table(ms, m, {window, options.reference_antenna, options.chunk_rows});
  if (main.radiometer.empty()) {
    throw InvalidInput(label + ": spectral window " + std::to_string(window) + " '" +
                       rad_window.name + "' has no autocorrelation rows in the main table");
  }

  // Time grid: every distinct radiometer time; the epoch is midnight UTC of the first.
  std::vector<double> grid;
  for (const auto& s : main.radiometer) grid.push_back(s.time_mjd_s);
  std::sort(grid.begin(), grid.end());
  grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
  const long long epoch_day = static_cast<long long>(std::floor(grid.front() / kSecondsPerDay));
  const double epoch_mjd_s = static_cast<double>(epoch_day) * kSecondsPerDay;
  const std::size_t nt = grid.size();

  Night& night = result.night;
  night.time_epoch_utc = iso_date_of_mjd_day(epoch_day);
  night.array = array_from_antennas(m, options.array_centre);
  night.radiometer.time_s.resize(nt);
  for (std::size_t k = 0; k < nt; ++k) night.radiometer.time_s[k] = grid[k] - epoch_mjd_s;
  night.radiometer.brightness_k.assign(na * nt * nc, std::nan(""));
  night.radiometer.valid.assign(na * nt, 0);
  std::vector<int> field_id(na * nt, -1);
  std::vector<std::uint8_t> seen(na * nt, 0);
  const bool planck = *options.brightness == BrightnessConvention::kPlanck;
  for (const auto& s : main.radiometer) {
    const std::size_t k = static_cast<std::size_t>(
        std::lower_bound(grid.begin(), grid.end(), s.time_mjd_s) - grid.begin());
    const std::size_t ak = static_cast<std::size_t>(s.antenna) * nt + k;
    if (seen[ak]) {
      throw InvalidInput(
          label + ": antenna " + m.antenna_names[static_cast<std::size_t>(s.antenna)] +
          " has two radiometer rows at TIME = " + std::to_string(s.time_mjd_s) + " s");
    }
    seen[ak] = 1;
    field_id[ak] = s.field;
    bool valid = s.valid;
    for (std::size_t c = 0; c < nc; ++c) {
      double tb = main.radiometer_values[s.offset + c];
      if (planck && std::isfinite(tb)) tb = rj_brightness_k(rad_window.chan_freq_ghz[c], tb);
      valid = valid && std::isfinite(tb);
      night.radiometer.brightness_k[ak * nc + c] = valid ? tb : std::nan("");
    }
    if (!valid)
      for (std::size_t c = 0; c < nc; ++c)
        night.radiometer.brightness_k[ak * nc + c] = std::nan("");
    night.radiometer.valid[ak] = valid ? 1 : 0;
  }
  std::size_t missing_antennas = 0;
  std::string missing_names;
  for (std::size_t a = 0; a < na; ++a) {
    if (std::none_of(seen.begin() + static_cast<std::ptrdiff_t>(a * nt),
                     seen.begin() + static_cast<std::ptrdiff_t>((a + 1) * nt),
                     [](std::uint8_t x) { return x != 0; })) {
      ++missing_antennas;
      missing_names += (missing_names.empty() ? "" : ", ") + m.antenna_names[a];
    }
  }
  if (missing_antennas > 0) {
    notes.push_back("no radiometer autocorrelations for antennas " + missing_names +
                    ": their samples are flagged invalid");
  }
  const std::size_t absent = static_cast<std::size_t>(std::count(seen.begin(), seen.end(), 0));
  if (absent > missing_antennas * nt) {
    notes.push_back(std::to_string(absent - missing_antennas * nt) +
                    " antenna x time radiometer samples have no row: flagged invalid");
  }
  if (main.flagged_radiometer_samples > 0) {
    notes.push_back(std::to_string(main.flagged_radiometer_samples) +
                    " radiometer samples flagged in the MS: invalid");
  }
  if (!options.radiometer) estimate_channel_noise(night, config);
  night.radiometer.config = config;

  archive::PointingSeries pointing = archive::read_pointing(ms, m, grid, field_id, notes);
  night.pointing.azimuth_deg = std::move(pointing.azimuth_deg);
  night.pointing.elevation_deg = std::move(pointing.elevation_deg);
  night.scans = scans_from_records(main, m, epoch_mjd_s, label, notes);
  archive::WeatherSeries weather = archive::read_weather(ms, epoch_mjd_s, notes);
  night.weather = {std::move(weather.time_s), std::move(weather.temperature_k),
                   std::move(weather.pressure_hpa), std::move(weather.relative_humidity_pct)};

  std::vector<archive::PhaseRecord> phases = main.calibrator_phases;
  std::stable_sort(phases.begin(), phases.end(),
                   [](const auto& x, const auto& y) { return x.time_mjd_s < y.time_mjd_s; });
  for (const auto& p : phases) {
    night.calibrator_phases.time_s.push_back(p.time_mjd_s - epoch_mjd_s);
    night.calibrator_phases.antenna_pair.push_back(p.antennas);
    night.calibrator_phases.phase_rad.push_back(p.phase_rad);
    night.calibrator_phases.freq_ghz.push_back(p.freq_ghz);
  }
  if (main.flagged_calibrator_rows > 0) {
    notes.push_back(std::to_string(main.flagged_calibrator_rows) +
                    " calibrator rows fully flagged: no phase");
  }
  if (main.calibrator_rows_without_data > 0) {
    notes.push_back(std::to_string(main.calibrator_rows_without_data) +
                    " calibrator cross-correlation rows without a DATA cell (FLOAT_DATA "
                    "holds no phase): no calibrator phases from them");
  }
  if (std::none_of(night.scans.begin(), night.scans.end(),
                   [](const Scan& s) { return s.intent == ScanIntent::kCalibrator; })) {
    notes.push_back(
        "no calibrator scans (STATE OBS_MODE with CALIBRATE_PHASE): no calibrator phases");
  }

  if (night.weather.time_s.empty()) {
    notes.push_back(
        "no site record: without WEATHER the surface humidity is unknown; give a site "
        "when processing");
    return result;
  }
  NightSite site;
  site.site = default_site_from_night(night);
  site.site.name = "imported from " + ms.filename().string();
  site.site.latitude_deg = night.array.reference_latitude_deg;
  site.provenance =
      "imported: surface values are the medians of WEATHER (averaged over stations) "
      "of " +
      ms.filename().string() + ", altitude the array's reference height";
  night.site = site;
  return result;
}

}  // namespace

const char* to_string(BrightnessConvention convention) {
  return convention == BrightnessConvention::kPlanck ? "planck" : "rayleigh-jeans";
}

BrightnessConvention parse_brightness_convention(const std::string& text) {
  if (text == "rayleigh-jeans") return BrightnessConvention::kRayleighJeans;
  if (text == "planck") return BrightnessConvention::kPlanck;
  throw InvalidInput("brightness convention = '" + text + "' is not rayleigh-jeans or planck");
}

MsImport import_measurement_set(const std::filesystem::path& ms, const MsImportOptions& options) {
  if (!options.brightness) {
    throw InvalidInput("brightness convention is not set: say whether " + ms.string() +
                       " stores rayleigh-jeans or planck brightness");
  }
  if (options.chunk_rows == 0) throw InvalidInput("chunk_rows = 0 must be at least 1");
  MsImport result;
  archive::with_casacore_errors(ms.string(), [&] { result = import_unchecked(ms, options); });
  if (options.clock_offset != ClockOffsetMode::kNone) {
    std::vector<ClockOffset> offsets;
    if (options.clock_offset == ClockOffsetMode::kGiven) {
      require_finite("clock_offset_s", options.clock_offset_s);
      offsets.assign(result.night.antenna_count(),
                     ClockOffset{options.clock_offset_s, 0.0, 0, false});
    } else {
      offsets = estimate_clock_offsets(result.night, options.clock_search_halfwidth_s,
                                       options.clock_offset == ClockOffsetMode::kPerAntenna);
    }
    apply_clock_offsets(result.night, offsets);
    result.clock_offsets = offsets;
    // Kept with the night so that the applied shift stays traceable.
    const std::size_t na = offsets.size();
    std::vector<double> offset_s(na), sigma_s(na);
    std::vector<std::uint8_t> estimated(na);
    for (std::size_t a = 0; a < na; ++a) {
      offset_s[a] = offsets[a].offset_s;
      sigma_s[a] = offsets[a].sigma_s;
      estimated[a] = offsets[a].estimated ? 1 : 0;
    }
    ResultGroup group;
    group.stage = "clock_offset";
    group.attributes["meaning"] =
        "radiometer stamp = correlator time + offset_s; brightness resampled onto correlator time";
    group.datasets.push_back({"offset_s", {na}, offset_s, "s", {}});
    group.datasets.push_back({"offset_sigma_s", {na}, sigma_s, "s", {}});
    group.datasets.push_back({"estimated", {na}, estimated, "1", {}});
    result.night.results.push_back(std::move(group));
  }
  validate_night(result.night, ms.string());
  return result;
}

}  // namespace wvr
