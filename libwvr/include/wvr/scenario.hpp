#pragma once
// Scenario of a synthetic observing night: array, site, atmosphere, turbulence, clouds,
// radiometer faults and the observing pattern. Read from TOML (testdata/demo-scenario.toml is
// the annotated example); file paths inside are relative to the scenario file.

#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "wvr/array_layout.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/phase_screen.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/site_config.hpp"
#include "wvr/source_track.hpp"

namespace wvr {

// One frozen-flow layer with an amplitude schedule: the layer's path is multiplied by a factor
// interpolated linearly in time between (time_s, factor) points (constant outside them; an
// empty schedule means factor 1). Episodes where the factor exceeds 0.5 are written to the
// truth under `label` when it is not empty (e.g. "dry turbulence").
struct TurbulenceSpec {
  TurbulentLayer layer;
  std::vector<std::pair<double, double>> schedule;
  std::string label;

  double factor_at(double time_s) const;
};

// A cloud deck over the whole array: liquid water path rising linearly over ramp_s from
// start_s, holding, and falling over ramp_s before stop_s.
struct CloudEpisode {
  double start_s = 0.0;
  double stop_s = 0.0;
  double liquid_water_path_kg_m2 = 0.1;
  double ramp_s = 60.0;

  double liquid_water_path_at(double time_s) const;
};

enum class FaultKind {
  kSpike,         // isolated jumps of `magnitude` K on random samples (2 % of them)
  kGainDrift,     // brightness multiplied by 1 + magnitude * hours since start
  kStuckChannel,  // the channel repeats its value at the fault start
  kDeadChannel,   // the channel reads NaN (the sample stays marked valid: the box reports it)
  kDropout,       // no data: every channel NaN and the sample marked invalid
};
FaultKind fault_kind_from_string(const std::string& name);  // throws InvalidInput
std::string to_string(FaultKind kind);

struct RadiometerFault {
  int antenna = 0;
  FaultKind kind = FaultKind::kSpike;
  double start_s = 0.0;
  double stop_s = 0.0;
  int channel = -1;  // -1 = every channel
  double magnitude = 0.0;
};

// Calibration errors of the radiometers, drawn per antenna and channel from zero-mean Gaussians
// of these spreads (seeded by the scenario seed): a radiometer reports
//   (1 + gain + gain_drift h) T_sky + offset + offset_drift h,   h = hours since the start.
struct CalibrationErrorSpec {
  double offset_sigma_k = 0.0;
  double gain_sigma = 0.0;  // fraction, e.g. 0.02 for 2 %
  double offset_drift_sigma_k_per_hour = 0.0;
  double gain_drift_sigma_per_hour = 0.0;

  bool any() const;
};

// The sky that makes the night, where it differs from the site model the retrieval will use
// (the scenario's site file, which the night records). Unset fields follow the site file.
struct TrueSky {
  std::string absorption_model = "p676";  // a key of make_absorption_model
  double water_continuum_scale = 1.0;     // the sky's water continuum relative to the model's
  std::optional<double> lapse_rate_k_per_km;
  std::optional<double> water_scale_height_m;
  std::optional<Inversion> inversion;
  CalibrationErrorSpec calibration;

  // The site parameters of the true sky's profile.
  SiteParameters apply_to(const SiteParameters& site) const;
  // How the true sky differs from the site model, as "name = value" pairs in name order for
  // the truth record (empty when it does not).
  std::vector<std::pair<std::string, std::string>> describe() const;
};

struct ObservingPattern {
  double obs_freq_ghz = 230.0;
  double calibrator_scan_s = 60.0;
  double target_scan_s = 240.0;
  std::string calibrator = "cal-A";
  std::string target = "target-1";
  double thermal_phase_noise_deg = 3.0;  // rms per baseline and integration
  bool all_baselines = false;            // false: each antenna against antenna 0
};

struct Scenario {
  std::string name;
  std::uint64_t seed = 1;
  std::string start_utc = "2026-11-14T01:00:00Z";
  double duration_s = 7200.0;
  double integration_s = 1.0;
  SiteConfig site;
  RadiometerConfig radiometer;
  ArrayLayoutSpec array;
  double pwv_mm = 1.0;
  double pwv_drift_mm_per_hour = 0.0;
  TrueSky true_sky;
  double cloud_base_above_ground_m = 1000.0;
  double cloud_thickness_m = 1000.0;
  SourceTrack source;
  ObservingPattern observing;
  std::vector<TurbulenceSpec> turbulence;
  std::vector<CloudEpisode> clouds;
  std::vector<RadiometerFault> faults;
  double screen_spacing_m = 10.0;

  std::size_t time_count() const;
  // Throws InvalidInput naming the first bad field.
  void validate() const;
};

Scenario parse_scenario(const std::string& toml_text,
                        const std::string& source_name,
                        const std::filesystem::path& base_directory);
Scenario load_scenario(const std::filesystem::path& path);

}  // namespace wvr
