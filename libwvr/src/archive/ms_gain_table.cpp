#include "archive/ms_gain_table.hpp"

#include <casacore/casa/Arrays/Array.h>
#include <casacore/casa/Arrays/Slicer.h>
#include <casacore/casa/Arrays/Vector.h>
#include <casacore/casa/BasicSL/Complex.h>
#include <casacore/casa/Containers/Record.h>
#include <casacore/tables/Tables/ArrColDesc.h>
#include <casacore/tables/Tables/ArrayColumn.h>
#include <casacore/tables/Tables/ScaColDesc.h>
#include <casacore/tables/Tables/ScalarColumn.h>
#include <casacore/tables/Tables/SetupNewTab.h>
#include <casacore/tables/Tables/TableDesc.h>
#include <casacore/tables/Tables/TableInfo.h>
#include <casacore/tables/Tables/TableLock.h>
#include <casacore/tables/Tables/TableRecord.h>

#include <algorithm>
#include <cmath>
#include <complex>

#include "archive/ms_metadata.hpp"
#include "archive/ms_scan_spans.hpp"
#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {
namespace {

// The Jones type written: a per-polarisation complex gain, one value per spectral window
// (the type name and the keywords below are casacore's calibration-table conventions as
// remembered, see ARCHIVE.md).
constexpr const char* kVisCal = "G Jones";

casacore::Table copy_subtable(const std::filesystem::path& ms,
                              const std::string& name,
                              const std::filesystem::path& table,
                              bool keep_rows) {
  const casacore::Table source = open_subtable(ms, name);
  source.deepCopy((table / name).string(), casacore::Table::New, true,
                  casacore::Table::AipsrcEndian, !keep_rows);
  return casacore::Table((table / name).string(),
                         casacore::TableLock(casacore::TableLock::NoLocking),
                         casacore::Table::Update);
}

// The copied SPECTRAL_WINDOW describes each solution's single channel: NUM_CHAN 1, CHAN_FREQ
// the window's centre (the frequency the gain phase is exact at), widths summed over the
// window. The channel columns are re-created so that a fixed-shape source column fits.
void collapse_to_one_channel(casacore::Table& spw, const MsMetadata& metadata) {
  for (const char* name : {"CHAN_FREQ", "CHAN_WIDTH", "EFFECTIVE_BW", "RESOLUTION"}) {
    if (!spw.tableDesc().isColumn(name)) continue;
    const casacore::ColumnDesc old_desc = spw.tableDesc().columnDesc(name);
    std::vector<double> values(spw.nrow());
    {
      casacore::ArrayColumn<double> column(spw, name);
      for (casacore::rownr_t r = 0; r < spw.nrow(); ++r) {
        if (std::string(name) == "CHAN_FREQ") {
          values[r] = metadata.spectral_windows[r].mean_freq_ghz * 1e9;
        } else if (column.isDefined(r)) {
          const casacore::Vector<double> v = column(r);
          double sum = 0.0;
          for (double x : v) sum += x;
          values[r] = sum;
        }
      }
    }
    spw.removeColumn(name);
    casacore::ArrayColumnDesc<double> desc(name, old_desc.comment(), 1);
    desc.rwKeywordSet() = old_desc.keywordSet();
    spw.addColumn(desc);
    casacore::ArrayColumn<double> column(spw, name);
    for (casacore::rownr_t r = 0; r < spw.nrow(); ++r)
      column.put(r, casacore::Vector<double>(1, values[r]));
  }
  if (spw.tableDesc().isColumn("NUM_CHAN")) {
    casacore::ScalarColumn<int> num_chan(spw, "NUM_CHAN");
    for (casacore::rownr_t r = 0; r < spw.nrow(); ++r) num_chan.put(r, 1);
  }
  spw.flush();
}

casacore::TableDesc main_table_description() {
  casacore::TableDesc desc("", "1", casacore::TableDesc::Scratch);
  desc.comment() = "antenna-based gains: radiometer phase correction (libwvr)";
  casacore::ScalarColumnDesc<double> time("TIME", "solution time (MJD seconds, UTC)");
  time.rwKeywordSet().define("QuantumUnits", casacore::Vector<casacore::String>(1, "s"));
  casacore::TableRecord measure;
  measure.define("type", "epoch");
  measure.define("Ref", "UTC");
  time.rwKeywordSet().defineRecord("MEASINFO", measure);
  desc.addColumn(time);
  casacore::ScalarColumnDesc<double> interval("INTERVAL", "solution interval");
  interval.rwKeywordSet().define("QuantumUnits", casacore::Vector<casacore::String>(1, "s"));
  desc.addColumn(interval);
  for (const char* name :
       {"FIELD_ID", "SPECTRAL_WINDOW_ID", "ANTENNA1", "ANTENNA2", "SCAN_NUMBER", "OBSERVATION_ID"})
    desc.addColumn(casacore::ScalarColumnDesc<int>(name));
  desc.addColumn(casacore::ArrayColumnDesc<casacore::Complex>("CPARAM", "complex gain", 2));
  desc.addColumn(casacore::ArrayColumnDesc<float>("PARAMERR", "gain error (-1: not estimated)", 2));
  desc.addColumn(casacore::ArrayColumnDesc<bool>("FLAG", "solution unusable", 2));
  desc.addColumn(casacore::ArrayColumnDesc<float>("SNR", "signal to noise (0: not estimated)", 2));
  return desc;
}

// Receptor polarisations of a window's gains: the parallel hands of its data descriptions
// (1 or 2), 1 when no data description uses the window.
std::size_t polarisations_of(const MsMetadata& metadata, int window) {
  std::size_t n = 1;
  for (const DataDescription& d : metadata.data_descriptions)
    if (d.spectral_window == window)
      n = std::max(n, std::min<std::size_t>(2, d.parallel_hands.size()));
  return n;
}

double median_spacing_s(const std::vector<double>& time) {
  if (time.size() < 2) return 0.0;
  std::vector<double> dt;
  for (std::size_t k = 1; k < time.size(); ++k) dt.push_back(time[k] - time[k - 1]);
  std::nth_element(dt.begin(), dt.begin() + static_cast<std::ptrdiff_t>(dt.size() / 2), dt.end());
  return dt[dt.size() / 2];
}

}  // namespace

GainTableResult write_gain_table(const std::filesystem::path& ms,
                                 const std::filesystem::path& temporary,
                                 const CorrectionPlan& plan,
                                 std::size_t antennas,
                                 const GainTableRequest& request) {
  const std::string label = ms.string();
  const MsMetadata metadata = read_ms_metadata(ms);
  if (metadata.antenna_names.size() != antennas) {
    throw InvalidInput(label + ": ANTENNA has " + std::to_string(metadata.antenna_names.size()) +
                       " rows, the night " + std::to_string(antennas) + " antennas");
  }
  GainTableResult result;
  if (!request.radiometer_window.empty()) {
    result.radiometer_window = find_radiometer_window(
        metadata, request.radiometer_window, request.radiometer_search_halfwidth_ghz, label);
  } else {
    const std::vector<int> near =
        windows_near_water_line(metadata, request.radiometer_search_halfwidth_ghz);
    if (near.size() > 1) {  // the same error as the import's
      find_radiometer_window(metadata, "", request.radiometer_search_halfwidth_ghz, label);
    }
    if (near.empty()) {
      result.radiometer_search =
          describe_water_line_search(metadata, request.radiometer_search_halfwidth_ghz);
    } else {
      result.radiometer_window = near.front();
    }
  }
  for (std::size_t w = 0; w < metadata.spectral_windows.size(); ++w)
    if (static_cast<int>(w) != result.radiometer_window)
      result.spectral_windows.push_back(static_cast<int>(w));
  if (result.spectral_windows.empty())
    throw InvalidInput(label +
                       ": SPECTRAL_WINDOW holds only the radiometer window; no window "
                       "for gains");
  const std::vector<ScanSpan> spans = scan_spans(ms, request.chunk_rows);

  const std::size_t nt = plan.time_mjd_s.size(), nw = result.spectral_windows.size();
  result.solutions = nt * nw * antennas;
  {
    casacore::SetupNewTable setup(temporary.string(), main_table_description(),
                                  casacore::Table::New);
    casacore::Table table(setup, casacore::TableLock(casacore::TableLock::NoLocking),
                          result.solutions);
    casacore::TableInfo& info = table.tableInfo();
    info.setType("Calibration");
    info.setSubType(kVisCal);
    info.readmeAddLine("Antenna-based phase gains from a radiometer phase correction (libwvr)");
    table.flushTableInfo();

    // One block of `antennas` rows (one array shape) per time and window, so that memory
    // stays one block whatever the number of solutions.
    casacore::ScalarColumn<double> time(table, "TIME"), interval(table, "INTERVAL");
    casacore::ScalarColumn<int> field(table, "FIELD_ID"), window(table, "SPECTRAL_WINDOW_ID"),
        antenna1(table, "ANTENNA1"), antenna2(table, "ANTENNA2"), scan(table, "SCAN_NUMBER"),
        observation(table, "OBSERVATION_ID");
    casacore::ArrayColumn<casacore::Complex> cparam(table, "CPARAM");
    casacore::ArrayColumn<float> paramerr(table, "PARAMERR"), snr(table, "SNR");
    casacore::ArrayColumn<bool> flag(table, "FLAG");
    std::vector<double> scale;
    std::vector<std::size_t> polarisations;
    for (int w : result.spectral_windows) {
      scale.push_back(
          plan.phase_scale(metadata.spectral_windows[static_cast<std::size_t>(w)].mean_freq_ghz));
      polarisations.push_back(polarisations_of(metadata, w));
    }
    const double interval_s = median_spacing_s(plan.time_mjd_s);
    const auto block = static_cast<ssize_t>(antennas);
    casacore::Vector<int> antenna_index(antennas);
    for (std::size_t a = 0; a < antennas; ++a) antenna_index[a] = static_cast<int>(a);
    casacore::rownr_t row = 0;
    for (std::size_t k = 0; k < nt; ++k) {
      const ScanSpan& span = span_at(spans, plan.time_mjd_s[k]);
      for (std::size_t iw = 0; iw < nw; ++iw) {
        const casacore::Slicer rows(casacore::IPosition(1, static_cast<ssize_t>(row)),
                                    casacore::IPosition(1, block));
        time.putColumnRange(rows, casacore::Vector<double>(antennas, plan.time_mjd_s[k]));
        interval.putColumnRange(rows, casacore::Vector<double>(antennas, interval_s));
        field.putColumnRange(rows, casacore::Vector<int>(antennas, span.field));
        window.putColumnRange(rows, casacore::Vector<int>(antennas, result.spectral_windows[iw]));
        antenna1.putColumnRange(rows, antenna_index);
        // No reference antenna: each antenna's gain is its own path correction.
        antenna2.putColumnRange(rows, casacore::Vector<int>(antennas, -1));
        scan.putColumnRange(rows, casacore::Vector<int>(antennas, span.scan));
        observation.putColumnRange(rows, casacore::Vector<int>(antennas, span.observation));

        const std::size_t np = polarisations[iw];
        const casacore::IPosition shape(3, static_cast<ssize_t>(np), 1, block);
        casacore::Array<casacore::Complex> gains(shape);
        casacore::Array<bool> flags(shape);
        for (std::size_t a = 0; a < antennas; ++a) {
          const bool usable = plan.usable[a * nt + k] != 0;
          if (!usable) ++result.solutions_flagged;
          // g_a = exp(i phi_a s): a general-purpose application V_ij / (g_i conj(g_j)) then
          // gives V_ij exp(i (phi_j - phi_i) s), the corrected copy's rotation.
          const std::complex<double> g =
              usable ? std::polar(1.0, plan.phase_rad[a * nt + k] * scale[iw]) : 1.0;
          for (std::size_t p = 0; p < np; ++p) {
            const casacore::IPosition at(3, static_cast<ssize_t>(p), 0, static_cast<ssize_t>(a));
            gains(at) =
                casacore::Complex(static_cast<float>(g.real()), static_cast<float>(g.imag()));
            flags(at) = !usable;
          }
        }
        cparam.putColumnRange(rows, gains);
        flag.putColumnRange(rows, flags);
        paramerr.putColumnRange(rows, casacore::Array<float>(shape, -1.0f));
        snr.putColumnRange(rows, casacore::Array<float>(shape, 0.0f));
        row += antennas;
      }
    }

    casacore::TableRecord& keywords = table.rwKeywordSet();
    keywords.define("ParType", "Complex");
    keywords.define("MSName", ms.filename().string());
    keywords.define("VisCal", kVisCal);
    keywords.define("PolBasis", "unknown");
    for (const char* name : {"ANTENNA", "FIELD", "OBSERVATION"})
      keywords.defineTable(name, copy_subtable(ms, name, temporary, true));
    casacore::Table spw = copy_subtable(ms, "SPECTRAL_WINDOW", temporary, true);
    collapse_to_one_channel(spw, metadata);
    keywords.defineTable("SPECTRAL_WINDOW", spw);
    casacore::Table history = copy_subtable(ms, "HISTORY", temporary, false);
    keywords.defineTable("HISTORY", history);
    table.flush();
  }
  append_history(temporary / "HISTORY", plan.history,
                 plan.time_mjd_s.empty() ? 0.0 : plan.time_mjd_s.back(), "skyphase export");
  return result;
}

}  // namespace wvr::archive
