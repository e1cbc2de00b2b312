#include "archive/ms_metadata.hpp"

#include <casacore/casa/Arrays/Array.h>
#include <casacore/casa/Arrays/Vector.h>
#include <casacore/measures/Measures/Stokes.h>
#include <casacore/tables/Tables/ArrayColumn.h>
#include <casacore/tables/Tables/ScalarColumn.h>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {
namespace {

constexpr double kWaterLineGhz = 183.31;  // 183.310 GHz water line (from memory; JPL catalogue)

std::vector<double> as_ghz(const casacore::Vector<double>& hz) {
  std::vector<double> out(hz.size());
  for (std::size_t i = 0; i < hz.size(); ++i) out[i] = hz[i] * 1e-9;
  return out;
}

std::string describe_window(std::size_t index, const SpectralWindow& w) {
  std::ostringstream s;
  s << index << " '" << w.name << "' (" << w.chan_freq_ghz.size() << " channels";
  if (!w.chan_freq_ghz.empty()) {
    const auto [lo, hi] = std::minmax_element(w.chan_freq_ghz.begin(), w.chan_freq_ghz.end());
    s << ", " << *lo << "-" << *hi << " GHz";
  }
  s << ")";
  return s.str();
}

StateIntent intent_of(const std::string& obs_mode) {
  // Intents are '#'- and ','-separated words such as CALIBRATE_PHASE#ON_SOURCE or
  // OBSERVE_TARGET#ON_SOURCE (the usual MS STATE vocabulary, from memory).
  if (obs_mode.find("CALIBRATE_PHASE") != std::string::npos) return StateIntent::kCalibrator;
  if (obs_mode.find("OBSERVE_TARGET") != std::string::npos) return StateIntent::kTarget;
  return StateIntent::kOther;
}

}  // namespace

MsMetadata read_ms_metadata(const std::filesystem::path& ms) {
  const std::string label = ms.string();
  MsMetadata m;

  const casacore::Table spw = open_subtable(ms, "SPECTRAL_WINDOW");
  for (const char* c : {"CHAN_FREQ", "CHAN_WIDTH", "NAME"})
    require_column(spw, label + "/SPECTRAL_WINDOW", c);
  casacore::ArrayColumn<double> chan_freq(spw, "CHAN_FREQ"), chan_width(spw, "CHAN_WIDTH");
  casacore::ScalarColumn<casacore::String> spw_name(spw, "NAME");
  for (casacore::rownr_t r = 0; r < spw.nrow(); ++r) {
    SpectralWindow w;
    w.name = spw_name(r);
    w.chan_freq_ghz = as_ghz(chan_freq(r));
    w.chan_width_ghz = as_ghz(chan_width(r));
    if (w.chan_freq_ghz.empty() || w.chan_width_ghz.size() != w.chan_freq_ghz.size()) {
      throw InvalidInput(label + "/SPECTRAL_WINDOW: row " + std::to_string(r) +
                         " has no channels or CHAN_WIDTH does not match CHAN_FREQ");
    }
    for (double f : w.chan_freq_ghz) {
      if (!std::isfinite(f) || f <= 0.0)
        throw InvalidInput(label + "/SPECTRAL_WINDOW: row " + std::to_string(r) +
                           " has CHAN_FREQ = " + std::to_string(f * 1e9) + " Hz");
    }
    w.mean_freq_ghz = std::accumulate(w.chan_freq_ghz.begin(), w.chan_freq_ghz.end(), 0.0) /
                      static_cast<double>(w.chan_freq_ghz.size());
    m.spectral_windows.push_back(std::move(w));
  }

  const casacore::Table pol = open_subtable(ms, "POLARIZATION");
  require_column(pol, label + "/POLARIZATION", "CORR_TYPE");
  casacore::ArrayColumn<int> corr_type(pol, "CORR_TYPE");
  std::vector<std::vector<int>> parallel(pol.nrow());
  for (casacore::rownr_t r = 0; r < pol.nrow(); ++r) {
    const casacore::Vector<int> types = corr_type(r);
    for (std::size_t k = 0; k < types.size(); ++k) {
      const int t = types[k];
      if (t == casacore::Stokes::RR || t == casacore::Stokes::LL || t == casacore::Stokes::XX ||
          t == casacore::Stokes::YY)
        parallel[r].push_back(static_cast<int>(k));
    }
  }

  const casacore::Table dd = open_subtable(ms, "DATA_DESCRIPTION");
  for (const char* c : {"SPECTRAL_WINDOW_ID", "POLARIZATION_ID"})
    require_column(dd, label + "/DATA_DESCRIPTION", c);
  casacore::ScalarColumn<int> dd_spw(dd, "SPECTRAL_WINDOW_ID"), dd_pol(dd, "POLARIZATION_ID");
  for (casacore::rownr_t r = 0; r < dd.nrow(); ++r) {
    const int s = dd_spw(r), p = dd_pol(r);
    if (s < 0 || static_cast<std::size_t>(s) >= m.spectral_windows.size() || p < 0 ||
        static_cast<std::size_t>(p) >= parallel.size()) {
      throw InvalidInput(label + "/DATA_DESCRIPTION: row " + std::to_string(r) +
                         " refers to SPECTRAL_WINDOW_ID = " + std::to_string(s) +
                         ", POLARIZATION_ID = " + std::to_string(p) + ", which do not exist");
    }
    m.data_descriptions.push_back({s, parallel[static_cast<std::size_t>(p)]});
  }

  const casacore::Table antenna = open_subtable(ms, "ANTENNA");
  for (const char* c : {"NAME", "POSITION"}) require_column(antenna, label + "/ANTENNA", c);
  casacore::ScalarColumn<casacore::String> antenna_name(antenna, "NAME");
  casacore::ArrayColumn<double> position(antenna, "POSITION");
  if (antenna.nrow() == 0) throw InvalidInput(label + "/ANTENNA has no rows");
  for (casacore::rownr_t r = 0; r < antenna.nrow(); ++r) {
    const casacore::Vector<double> p = position(r);
    if (p.size() != 3 || !std::isfinite(p[0]) || !std::isfinite(p[1]) || !std::isfinite(p[2]) ||
        std::hypot(p[0], p[1], p[2]) < 6.0e6) {
      throw InvalidInput(label + "/ANTENNA: POSITION of row " + std::to_string(r) +
                         " is not an Earth-fixed position in metres");
    }
    m.antenna_names.push_back(antenna_name(r));
    m.antenna_itrf_m.push_back({p[0], p[1], p[2]});
  }

  const casacore::Table field = open_subtable(ms, "FIELD");
  require_column(field, label + "/FIELD", "NAME");
  casacore::ScalarColumn<casacore::String> field_name(field, "NAME");
  for (casacore::rownr_t r = 0; r < field.nrow(); ++r) m.fields.push_back({field_name(r)});

  const casacore::Table state = open_subtable(ms, "STATE");
  require_column(state, label + "/STATE", "OBS_MODE");
  casacore::ScalarColumn<casacore::String> obs_mode(state, "OBS_MODE");
  for (casacore::rownr_t r = 0; r < state.nrow(); ++r) m.states.push_back(intent_of(obs_mode(r)));
  return m;
}

std::vector<int> windows_near_water_line(const MsMetadata& metadata, double halfwidth_ghz) {
  std::vector<int> matches;
  for (std::size_t i = 0; i < metadata.spectral_windows.size(); ++i) {
    bool near = true;
    for (double f : metadata.spectral_windows[i].chan_freq_ghz)
      near = near && std::abs(f - kWaterLineGhz) <= halfwidth_ghz;
    if (near) matches.push_back(static_cast<int>(i));
  }
  return matches;
}

std::string describe_water_line_search(const MsMetadata& metadata, double halfwidth_ghz) {
  std::ostringstream searched;
  searched << "channels all within " << halfwidth_ghz << " GHz of " << kWaterLineGhz
           << " GHz; searched SPECTRAL_WINDOW ";
  for (std::size_t i = 0; i < metadata.spectral_windows.size(); ++i)
    searched << (i ? "; " : "") << describe_window(i, metadata.spectral_windows[i]);
  return searched.str();
}

int find_radiometer_window(const MsMetadata& metadata,
                           const std::string& requested,
                           double halfwidth_ghz,
                           const std::string& ms_label) {
  const auto& windows = metadata.spectral_windows;
  if (!requested.empty()) {
    for (std::size_t i = 0; i < windows.size(); ++i)
      if (windows[i].name == requested || std::to_string(i) == requested)
        return static_cast<int>(i);
    std::string listed;
    for (std::size_t i = 0; i < windows.size(); ++i)
      listed += (i ? "; " : "") + describe_window(i, windows[i]);
    throw InvalidInput(ms_label + ": radiometer_window = '" + requested +
                       "' matches no spectral window index or NAME (windows: " + listed + ")");
  }
  const std::vector<int> matches = windows_near_water_line(metadata, halfwidth_ghz);
  const std::string searched = describe_water_line_search(metadata, halfwidth_ghz);
  if (matches.empty())
    throw InvalidInput(ms_label + ": no radiometer spectral window (" + searched + ")");
  if (matches.size() > 1)
    throw InvalidInput(ms_label + ": several spectral windows could be the radiometer (" +
                       searched + "); name one with radiometer_window");
  return matches.front();
}

}  // namespace wvr::archive
