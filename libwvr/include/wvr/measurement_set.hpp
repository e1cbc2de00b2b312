#pragma once
// MeasurementSets (the casacore table format of interferometer archives) in and out of nights.
// Built as the separate library wvr_archive (libwvr::archive) when casacore is found; the
// conventions it relies on are listed in libwvr/ARCHIVE.md.
//
//   wvr::MsImportOptions options;
//   options.brightness = wvr::BrightnessConvention::kRayleighJeans;
//   wvr::MsImport imported = wvr::import_measurement_set("obs.ms", options);
//   wvr::write_night(imported.night, "night.h5");
//   ... retrieve, calibrate, correct ...
//   wvr::export_measurement_set(wvr::read_night("corrected.h5"), "obs.ms", "obs-corrected.ms");
//   // or gains for general-purpose calibration software to apply:
//   wvr::export_gain_table(wvr::read_night("corrected.h5"), "obs.ms", "obs-wvr.gains");

#include <array>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "wvr/night.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/site_config.hpp"

namespace wvr {

// How the radiometer spectral window stores brightness. No default: archives differ.
enum class BrightnessConvention {
  kRayleighJeans,  // Rayleigh-Jeans-equivalent brightness J(nu, T) (libwvr's own convention)
  kPlanck          // Planck brightness temperature (physical temperature of a blackbody)
};
// "rayleigh-jeans" or "planck"; parse_brightness_convention throws InvalidInput otherwise.
const char* to_string(BrightnessConvention convention);
BrightnessConvention parse_brightness_convention(const std::string& text);

// How radiometer time stamps are moved onto the correlator's clock on import.
enum class ClockOffsetMode {
  kNone,       // radiometer stamps are taken as they are
  kGiven,      // clock_offset_s (one value for the night) is applied
  kNight,      // one offset estimated for the night and applied
  kPerAntenna  // one offset estimated per antenna and applied
};

struct MsImportOptions {
  // Required: how the radiometer window stores brightness.
  std::optional<BrightnessConvention> brightness;
  // Radiometer spectral window by index or NAME; empty: the one whose channels all lie within
  // radiometer_search_halfwidth_ghz of 183.31 GHz (exactly one must).
  std::string radiometer_window;
  double radiometer_search_halfwidth_ghz = 20.0;
  // Replaces the channel layout read from SPECTRAL_WINDOW (must have as many channels).
  std::optional<RadiometerConfig> radiometer;
  // Calibrator phases: -1 keeps every baseline; otherwise only baselines to this antenna
  // (index into ANTENNA), stored as (reference, other).
  int reference_antenna = -1;
  // Geodetic array centre (lat, lon in deg, height in m above WGS84) for the east/north/up
  // positions; absent: the geodetic point of the mean ITRF antenna position.
  std::optional<std::array<double, 3>> array_centre;
  // Main-table rows read per chunk (memory is bounded by this, not by the MS size).
  std::size_t chunk_rows = 20000;
  ClockOffsetMode clock_offset = ClockOffsetMode::kNone;
  double clock_offset_s = 0.0;          // for kGiven: radiometer stamp - correlator time
  double clock_search_halfwidth_s = 6;  // lags searched for kNight / kPerAntenna
};

// A radiometer-versus-correlator time offset: radiometer stamp = true time + offset_s.
struct ClockOffset {
  double offset_s = 0.0;
  double sigma_s = 0.0;    // 1-sigma from the curvature of the misfit at the minimum
  std::size_t rows = 0;    // calibrator phase rows used
  bool estimated = false;  // false: given, or too few rows (offset_s then 0)
};

struct MsImport {
  Night night;
  std::vector<std::string> notes;  // what was assumed, skipped or flagged, for people
  // [antenna] offsets applied (empty when none); one value repeated for a night-wide offset.
  std::vector<ClockOffset> clock_offsets;
};

// Reads a MeasurementSet into a night (see ARCHIVE.md). Throws InvalidInput naming the table,
// column and value for anything it cannot use (no radiometer window: the message lists every
// window searched).
MsImport import_measurement_set(const std::filesystem::path& ms, const MsImportOptions& options);

// Radiometer-versus-correlator clock offsets of a night that has calibrator phases: for each
// candidate lag on a grid of whole radiometer sample intervals within +/- halfwidth_s, the
// per-scan-detrended calibrator phases are fitted by the radiometer brightness differences (one
// coefficient per channel) sampled at the row times plus the lag; the lag of least misfit is
// refined by a parabola. per_antenna: one offset per antenna (rows containing that antenna), else
// one for the night (repeated).
std::vector<ClockOffset> estimate_clock_offsets(const Night& night,
                                                double halfwidth_s,
                                                bool per_antenna);

// Moves the radiometer series (brightness and validity) of each antenna onto the correlator
// clock: brightness at grid time t becomes the recorded value at stamp t + offset (linear
// interpolation); samples without recorded neighbours become invalid.
void apply_clock_offsets(Night& night, const std::vector<ClockOffset>& offsets);

struct MsExportOptions {
  // Site whose dispersion scales the phase to each channel; absent: the night's site policy
  // (wvr/night_site.hpp).
  std::optional<SiteConfig> site;
  bool overwrite_output = false;
  std::size_t chunk_rows = 20000;
};

struct MsExport {
  std::size_t rows = 0;          // main-table rows written
  std::size_t rows_flagged = 0;  // cross-correlation rows flagged for want of a correction
  std::vector<std::string> notes;
};

// Writes `output` (never `ms`): a copy of `ms` whose CORRECTED_DATA holds DATA with each
// antenna's correction phase (the night's /results/correction, interpolated to the row time and
// scaled to each channel frequency with the dispersion) applied, cross-correlation rows flagged
// where a correction is missing, and a HISTORY row. The output appears only once complete. Throws
// InvalidInput when the night has no correction, the MS does not match the night (antennas, times),
// or the output exists (unless overwrite_output).
MsExport export_measurement_set(const Night& night,
                                const std::filesystem::path& ms,
                                const std::filesystem::path& output,
                                const MsExportOptions& options = {});

struct GainTableOptions {
  // As MsExportOptions::site.
  std::optional<SiteConfig> site;
  // Spectral window of the radiometer, left without solutions, by index or NAME; empty: the
  // one whose channels all lie within 20 GHz of 183.31 GHz (as on import); when no window
  // qualifies every window gets solutions (and a note says so).
  std::string radiometer_window;
  bool overwrite_output = false;
  std::size_t chunk_rows = 20000;  // main-table rows read per chunk (scan and field lookup)
};

struct GainTableExport {
  std::size_t solutions = 0;          // gain-table rows (time x window x antenna)
  std::size_t solutions_flagged = 0;  // rows flagged: no usable correction for that sample
  std::vector<int> spectral_windows;  // the MS windows that have solutions
  int radiometer_window = -1;         // the window left out (-1: none identified)
  std::vector<std::string> notes;
};

// Writes `output` (a new casacore table; `ms` is only read): an antenna-based complex gain
// table in casacore's calibration-table layout (see ARCHIVE.md for the columns and keywords),
// one solution per correction time sample, spectral window of `ms` (except the radiometer's)
// and antenna: g = exp(i phi s(f)) with phi the antenna's correction phase and s the dispersion
// scaling to the window's centre frequency f, amplitude 1, flagged where the correction is
// unusable. Applied as V_ij / (g_i conj(g_j)) it reproduces export_measurement_set's
// CORRECTED_DATA at f. The output appears only once complete. Throws InvalidInput as
// export_measurement_set does, and when the MS has no cross-correlation rows.
GainTableExport export_gain_table(const Night& night,
                                  const std::filesystem::path& ms,
                                  const std::filesystem::path& output,
                                  const GainTableOptions& options = {});

}  // namespace wvr
