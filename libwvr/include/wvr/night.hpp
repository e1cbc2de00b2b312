#pragma once
// One observing night of radiometer data for an interferometer array, in memory.
//
// These are plain value types mirroring the night file (libwvr/FORMAT.md, read and written
// by wvr/night_file.hpp). Large series are flat, contiguous, row-major std::vector<double>
// so they can be handed to Eigen without a copy, e.g. the [time, channel] block of antenna a:
//
//   const double* p = night.radiometer.brightness_k.data() + a * T * C;
//   Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>
//       tb_k(p, T, C);
//
// with A = night.antenna_count(), T = night.time_count(), C = night.channel_count().
// All times are seconds since the night's time_epoch_utc.

#include <array>
#include <cstddef>
#include <cstdint>
#include <map>
#include <optional>
#include <span>
#include <string>
#include <variant>
#include <vector>

#include "wvr/radiometer.hpp"
#include "wvr/site_config.hpp"

namespace wvr {

// Antennas of the array (/array). Positions are local east/north/up offsets from the
// array reference point, whose geodetic coordinates are given once.
struct NightArray {
  std::vector<std::string> antenna_names;
  std::vector<std::array<double, 3>> position_enu_m;  // [antenna] x (east, north, up)
  std::vector<std::string> radiometer_ids;            // serial of the unit on each antenna
  double reference_latitude_deg = 0.0;
  double reference_longitude_deg = 0.0;
  double reference_height_m = 0.0;  // above the reference ellipsoid
};

// Radiometer channel table and brightness series (/radiometer). Every antenna carries a
// radiometer of the same design (`config`); units differ only in their serial number.
struct NightRadiometer {
  RadiometerConfig config;
  std::vector<double> time_s;        // [time], strictly increasing
  std::vector<double> brightness_k;  // [antenna, time, channel], row-major
  // [antenna, time]: 1 = usable sample, 0 = not (brightness may then be NaN).
  std::vector<std::uint8_t> valid;
};

// Pointing of every antenna at the radiometer sample times (/pointing).
struct NightPointing {
  std::vector<double> elevation_deg;  // [antenna, time], row-major
  std::vector<double> azimuth_deg;    // [antenna, time], row-major
};

enum class ScanIntent { kCalibrator, kTarget };

// "calibrator" or "target", as stored in the file.
std::string to_string(ScanIntent intent);

struct Scan {
  double start_s = 0.0;
  double stop_s = 0.0;
  ScanIntent intent = ScanIntent::kTarget;
  std::string source;
  double obs_freq_ghz = 0.0;  // sky frequency the array observes at
};

// Surface weather station series (/weather).
struct NightWeather {
  std::vector<double> time_s;  // strictly increasing
  std::vector<double> temperature_k;
  std::vector<double> pressure_hpa;
  std::vector<double> relative_humidity_pct;
};

// Baseline phases measured on calibrators (/calibrator_phases), one row per baseline and
// time: phase_rad[k] = phase(antenna_pair[k][1]) - phase(antenna_pair[k][0]) at time_s[k]
// and freq_ghz[k]. Rows are sorted by time. Antenna-based phases are stored as baselines
// to the reference antenna.
struct CalibratorPhases {
  std::vector<double> time_s;  // non-decreasing
  std::vector<std::array<std::int32_t, 2>> antenna_pair;
  std::vector<double> phase_rad;
  std::vector<double> freq_ghz;
};

// A labelled time window of a simulated night, e.g. "cloud" or "radiometer dropout".
struct TruthEpisode {
  double start_s = 0.0;
  double stop_s = 0.0;
  std::int32_t antenna = -1;  // antenna index, or -1 for the whole array
  std::string label;
};

// The atmosphere that generated a simulated night (/truth); absent for observed nights.
struct NightTruth {
  std::vector<double> wet_path_m;  // [antenna, time], row-major
  std::vector<double> dry_path_m;  // [antenna, time], row-major
  std::vector<double> pwv_mm;      // [antenna, time], row-major
  std::vector<TruthEpisode> episodes;
  // Radiometer calibration errors applied to the brightness, [antenna, channel] (empty when
  // none): reported = (1 + gain + gain_drift h) T_sky + offset + offset_drift h, h = hours
  // since the first sample.
  std::vector<double> calibration_offset_k, calibration_gain;
  std::vector<double> calibration_offset_drift_k_per_hour, calibration_gain_drift_per_hour;
  // How the sky that made the brightness differs from the night's site model, as name and
  // value (e.g. {"absorption_model", "r17"}); empty when the model made the night.
  std::vector<std::pair<std::string, std::string>> sky_differences;
};

// Values of a result dataset; the alternative chosen is the dataset's HDF5 type.
using ResultValues = std::variant<std::vector<double>,
                                  std::vector<float>,
                                  std::vector<std::int32_t>,
                                  std::vector<std::int64_t>,
                                  std::vector<std::uint8_t>>;

// One dataset of a result group: a row-major array of `shape` (empty shape = scalar).
struct ResultDataset {
  std::string name;
  std::vector<std::size_t> shape;
  ResultValues values;
  std::string units;  // "1" for dimensionless values, codes and flags
  std::map<std::string, std::string> attributes;

  // Number of elements the shape implies (1 for a scalar).
  std::size_t element_count() const;
};

// Output of one processing stage, stored as /results/<stage>.
struct ResultGroup {
  std::string stage;
  std::vector<ResultDataset> datasets;
  std::map<std::string, std::string> attributes;

  // The dataset called `name`, or nullptr.
  const ResultDataset* find(const std::string& name) const;
};

// The site model a night was made or recorded with (/site, schema version 2): the shape of
// the atmosphere the retrieval, calibration and diagnosis assume, and where it came from.
struct NightSite {
  SiteConfig site;
  // Where the parameters came from, e.g. "scenario 'demo night' (site file sites/demo.toml)"
  // or "imported from WEATHER of obs.ms"; written to and read from the file unchanged.
  std::string provenance;
};

struct Night {
  // UTC instant that every time_s counts from, ISO 8601 "YYYY-MM-DDThh:mm:ssZ".
  std::string time_epoch_utc;
  NightArray array;
  NightRadiometer radiometer;
  NightPointing pointing;
  std::vector<Scan> scans;  // sorted by start, non-overlapping
  NightWeather weather;
  CalibratorPhases calibrator_phases;
  std::optional<NightTruth> truth;
  std::optional<NightSite> site;     // absent in version-1 files and in bare recordings
  std::vector<ResultGroup> results;  // in the order the stages were added

  std::size_t antenna_count() const { return array.antenna_names.size(); }
  std::size_t time_count() const { return radiometer.time_s.size(); }
  std::size_t channel_count() const { return radiometer.config.channels.size(); }

  // Row-major [time, channel] brightness of one antenna (T * C values).
  std::span<const double> antenna_brightness_k(std::size_t antenna) const;
  // Validity flags of one antenna (T values).
  std::span<const std::uint8_t> antenna_valid(std::size_t antenna) const;

  // The result group of `stage`, or nullptr.
  const ResultGroup* find_result(const std::string& stage) const;
};

// Checks every field against the night file schema (sizes consistent with the antenna,
// time and channel counts, strictly increasing times, finite and plausible values, known
// names). Throws InvalidInput naming the dataset path, e.g.
// "night: /radiometer/time_s is not strictly increasing at index 3 (t = 2 s after 5 s)".
// `source` starts the message (a file name, or "night").
void validate_night(const Night& night, const std::string& source = "night");

// A time step of the radiometer series longer than 1.5 x the median cadence.
struct NightGap {
  double start_s = 0.0;  // last sample before the gap
  double stop_s = 0.0;   // first sample after it
};

// What `skyphase inspect` reports about a night.
struct NightSummary {
  std::string time_epoch_utc;
  std::size_t antenna_count = 0;
  std::size_t channel_count = 0;
  std::vector<std::string> channel_names;
  std::size_t time_count = 0;  // radiometer samples per antenna
  double start_s = 0.0;
  double stop_s = 0.0;
  double duration_s = 0.0;
  double median_cadence_s = 0.0;  // 0 with fewer than 2 samples
  std::vector<NightGap> gaps;
  double valid_fraction = 0.0;  // of all antenna x time samples
  std::vector<std::string> antenna_names;
  std::vector<double> antenna_valid_fraction;  // [antenna]
  std::size_t calibrator_scan_count = 0;
  std::size_t target_scan_count = 0;
  std::size_t weather_count = 0;
  std::size_t calibrator_phase_count = 0;
  bool has_truth = false;
  std::vector<std::string> result_stages;
};

NightSummary summarize(const Night& night);

// Multi-line plain-text rendering of a summary, one "label  value" line per item.
std::string format_night_summary(const NightSummary& summary);

}  // namespace wvr
