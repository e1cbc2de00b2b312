#pragma once
// Night mode: retrieve every antenna of a night.
//
// Per sample, the real-time table inversion (PwvTable) gives PWV, its uncertainty and a
// chi-square of the channels (dof = channels - 1), at the sample's elevation and the surface
// temperature interpolated from the night's weather. Per coefficient window (default 60 s)
// and antenna, the full fit (Retriever) on the window's mean brightness gives the state the
// path coefficients are computed at: each channel's path sensitivity (K per mm of slant wet
// path) and the minimum-variance combination weights
//   w_c = (s_c / sigma_c^2) / sum_k (s_k^2 / sigma_k^2)   (mm of path per K),
// so that a brightness change dT gives the path change dL = sum_c w_c dT_c with noise
// 1 / sqrt(sum_k s_k^2 / sigma_k^2); channels near saturation (small s_c) get little weight.
// Antennas are spread over threads; results do not depend on the thread count.

#include <cmath>
#include <cstdint>
#include <span>
#include <string>
#include <variant>
#include <vector>

#include "wvr/absorption.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/night.hpp"
#include "wvr/pwv_table.hpp"
#include "wvr/result_fields.hpp"
#include "wvr/retrieval.hpp"

namespace wvr {

// Reasons a sample or window is flagged (bits of a uint8). kRetrievalUnusable marks the bits
// after which the PWV is not usable; kFlagNoWeather is advisory (the site's surface
// temperature was used). kFlagElevationOutOfDomain comes with kFlagOutOfDomain and tells the
// pointing apart from the sky (kFlagOutOfDomain alone: surface temperature or PWV): a source
// below the table's elevation limit is not a radiometer fault. Retrievals stored before the bit
// existed have kFlagOutOfDomain alone for every cause.
enum RetrievalFlag : std::uint8_t {
  kFlagInvalidInFile = 1,          // the night file marks the sample invalid
  kFlagBadBrightness = 2,          // a channel is NaN, negative or implausible
  kFlagOutOfDomain = 4,            // elevation, surface temperature or PWV outside the table
  kFlagNoWeather = 8,              // no weather series: site surface temperature assumed
  kFlagFitFailed = 16,             // the inversion or the window fit did not converge
  kFlagNoValidSamples = 32,        // (windows) no usable sample in the window
  kFlagElevationOutOfDomain = 64,  // with kFlagOutOfDomain: elevation outside the table
};
inline constexpr std::uint8_t kRetrievalUnusable = kFlagInvalidInFile | kFlagBadBrightness |
                                                   kFlagOutOfDomain | kFlagFitFailed |
                                                   kFlagNoValidSamples;

// Text of the set bits, e.g. "bad brightness, no weather"; "ok" for 0.
std::string describe_retrieval_flags(std::uint8_t flags);

struct NightRetrievalOptions {
  double coefficient_window_s = 60.0;
  RetrievalOptions window_fit;  // options of the window full fits
  PwvTableOptions table;        // temperature range is set from the night's weather
  int threads = 0;              // 0 = all hardware threads
  // Key of the gaseous absorption model (make_absorption_model): "p676" or "r17".
  std::string absorption_model = kDefaultAbsorptionModel;

  void validate() const;
};

struct NightRetrieval {
  std::size_t antennas = 0, samples = 0, channels = 0, windows = 0;
  // Per sample, [antenna, time].
  std::vector<double> pwv_mm, pwv_sigma_mm, chi2_per_dof;
  std::vector<std::uint8_t> flags;
  // Per window.
  std::vector<double> window_start_s, window_stop_s;                            // [window]
  std::vector<double> window_pwv_mm, window_pwv_sigma_mm, window_chi2_per_dof;  // [antenna, window]
  std::vector<double> window_liquid_kg_m2;                                      // [antenna, window]
  std::vector<std::uint8_t> window_flags;                                       // [antenna, window]
  // [antenna, window, channel]
  std::vector<double> path_sensitivity_k_per_mm, combination_weight_mm_per_k;
  std::vector<double> path_noise_mm;  // [antenna, window]: 1 / sqrt(sum s^2 / sigma^2)
  // Reference state of each window for path estimation: the model brightness at the fitted
  // state [antenna, window, channel] and the slant wet path there [antenna, window].
  std::vector<double> window_model_brightness_k;
  std::vector<double> window_wet_path_mm;
  std::vector<double> window_elevation_deg;  // [antenna, window], mean of the used samples
  std::string model;                         // name of the absorption model used
  // Lowest elevation the table inverts (PwvTableOptions::min_elevation_deg); NaN when unknown
  // (retrievals stored before it was recorded).
  double table_min_elevation_deg = std::nan("");
  double seconds = 0.0;
};

// Throws InvalidInput for bad options or a night without radiometer data.
NightRetrieval retrieve_night(const Night& night,
                              const SiteParameters& site,
                              const NightRetrievalOptions& options = {});

// Every array of a NightRetrieval (axes: a antennas, t samples, w windows, c channels): the
// one list from which the result group, its reader and the Python properties follow.
std::span<const ResultArrayField<NightRetrieval>> night_retrieval_fields();
std::size_t axis_extent(const NightRetrieval& retrieval, char axis);

// The "retrieval" result group of the night file (datasets described in libwvr/FORMAT.md).
ResultGroup to_result_group(const NightRetrieval& retrieval, const Night& night);

// The retrieval read back from a night file's "retrieval" result group; throws InvalidInput
// naming a missing or mis-shaped dataset.
NightRetrieval retrieval_from_result_group(const ResultGroup& group);

// Numbers for a one-screen summary.
struct NightRetrievalSummary {
  std::size_t antennas = 0, samples = 0, samples_flagged = 0;
  double pwv_median_mm = 0.0, pwv_p10_mm = 0.0, pwv_p90_mm = 0.0;
  double chi2_per_dof_median = 0.0;
  std::vector<double> path_sensitivity_k_per_mm;  // per channel, median over antennas and windows
};
NightRetrievalSummary summarize(const NightRetrieval& retrieval);

// The summary's fields, each written once: the command line's JSON and the Python dict follow
// from this table, and the tests check the Python stub against it.
struct NightRetrievalSummaryField {
  using CountMember = std::size_t NightRetrievalSummary::*;
  using ValueMember = double NightRetrievalSummary::*;
  using PerChannelMember = std::vector<double> NightRetrievalSummary::*;

  const char* name;  // JSON key and Python dict key
  std::variant<CountMember, ValueMember, PerChannelMember> member;
  const char* units;  // "1" for counts and dimensionless values
  const char* meaning;
};
std::span<const NightRetrievalSummaryField> night_retrieval_summary_fields();

}  // namespace wvr
