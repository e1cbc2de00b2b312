#include "archive/ms_corrected_data.hpp"

#include <casacore/casa/Arrays/Matrix.h>
#include <casacore/casa/Arrays/Slicer.h>
#include <casacore/casa/Arrays/Vector.h>
#include <casacore/casa/BasicSL/Complex.h>
#include <casacore/tables/DataMan/StandardStMan.h>
#include <casacore/tables/Tables/ArrColDesc.h>
#include <casacore/tables/Tables/ArrayColumn.h>
#include <casacore/tables/Tables/ScalarColumn.h>
#include <casacore/tables/Tables/TableLock.h>

#include <algorithm>
#include <cmath>
#include <complex>

#include "archive/ms_metadata.hpp"
#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {
namespace {

// Correction phase of antenna a at time t; false when no usable neighbours bracket t.
bool phase_at(const CorrectionPlan& plan, std::size_t a, double t, double* phase) {
  const auto& time = plan.time_mjd_s;
  const std::size_t nt = time.size();
  auto it = std::lower_bound(time.begin(), time.end(), t);
  if (it == time.end()) return false;
  const std::size_t j = static_cast<std::size_t>(it - time.begin());
  if (*it == t) {
    *phase = plan.phase_rad[a * nt + j];
    return plan.usable[a * nt + j] != 0;
  }
  if (j == 0 || !plan.usable[a * nt + j] || !plan.usable[a * nt + j - 1]) return false;
  const double f = (t - time[j - 1]) / (time[j] - time[j - 1]);
  *phase = (1 - f) * plan.phase_rad[a * nt + j - 1] + f * plan.phase_rad[a * nt + j];
  return true;
}

}  // namespace

CorrectedCopyResult write_corrected_copy(const std::filesystem::path& ms,
                                         const std::filesystem::path& temporary,
                                         const CorrectionPlan& plan,
                                         std::size_t antennas,
                                         std::size_t chunk_rows) {
  const std::string label = ms.string();
  const MsMetadata metadata = read_ms_metadata(ms);
  if (metadata.antenna_names.size() != antennas) {
    throw InvalidInput(label + ": ANTENNA has " + std::to_string(metadata.antenna_names.size()) +
                       " rows, the night " + std::to_string(antennas) + " antennas");
  }
  {
    const casacore::Table input = open_table_read_only(ms);
    require_column(input, label, "DATA");
    input.deepCopy(temporary.string(), casacore::Table::New, true);
  }
  casacore::Table out(temporary.string(), casacore::TableLock(casacore::TableLock::NoLocking),
                      casacore::Table::Update);
  if (!out.tableDesc().isColumn("CORRECTED_DATA")) {
    out.addColumn(
        casacore::ArrayColumnDesc<casacore::Complex>("CORRECTED_DATA", "phase-corrected DATA"),
        casacore::StandardStMan("CorrectedDataStMan"));
  }
  casacore::ScalarColumn<double> time(out, "TIME");
  casacore::ScalarColumn<int> antenna1(out, "ANTENNA1"), antenna2(out, "ANTENNA2"),
      data_desc(out, "DATA_DESC_ID");
  casacore::ScalarColumn<bool> flag_row(out, "FLAG_ROW");
  casacore::ArrayColumn<bool> flag(out, "FLAG");
  casacore::ArrayColumn<casacore::Complex> data(out, "DATA"), corrected(out, "CORRECTED_DATA");

  // Per spectral window: the phase scale of each channel.
  std::vector<std::vector<double>> channel_scale;
  for (const SpectralWindow& w : metadata.spectral_windows) {
    std::vector<double> s;
    for (double f : w.chan_freq_ghz) s.push_back(plan.phase_scale(f));
    channel_scale.push_back(std::move(s));
  }
  CorrectedCopyResult result;
  result.rows = out.nrow();
  casacore::Matrix<casacore::Complex> vis;
  casacore::Matrix<bool> flags;
  std::vector<std::complex<double>> rotation;
  const std::size_t chunk = std::max<std::size_t>(1, chunk_rows);
  for (casacore::rownr_t start = 0; start < out.nrow(); start += chunk) {
    const casacore::rownr_t n = std::min<casacore::rownr_t>(chunk, out.nrow() - start);
    const casacore::Slicer rows(casacore::IPosition(1, static_cast<ssize_t>(start)),
                                casacore::IPosition(1, static_cast<ssize_t>(n)));
    const casacore::Vector<double> t = time.getColumnRange(rows);
    const casacore::Vector<int> a1 = antenna1.getColumnRange(rows);
    const casacore::Vector<int> a2 = antenna2.getColumnRange(rows);
    const casacore::Vector<int> dd = data_desc.getColumnRange(rows);
    for (casacore::rownr_t i = 0; i < n; ++i) {
      const casacore::rownr_t row = start + i;
      data.get(row, vis, true);
      if (a1[i] == a2[i]) {  // autocorrelations: the antenna's phase cancels
        corrected.put(row, vis);
        continue;
      }
      if (a1[i] < 0 || a2[i] < 0 || static_cast<std::size_t>(a1[i]) >= antennas ||
          static_cast<std::size_t>(a2[i]) >= antennas || dd[i] < 0 ||
          static_cast<std::size_t>(dd[i]) >= metadata.data_descriptions.size()) {
        throw InvalidInput(label + ": row " + std::to_string(row) +
                           " refers to an antenna or data description that does not exist");
      }
      double p1 = 0.0, p2 = 0.0;
      const bool ok = phase_at(plan, static_cast<std::size_t>(a1[i]), t[i], &p1) &&
                      phase_at(plan, static_cast<std::size_t>(a2[i]), t[i], &p2);
      if (!ok) {
        corrected.put(row, vis);
        flag.get(row, flags, true);
        flags = true;
        flag.put(row, flags);
        flag_row.put(row, true);
        ++result.rows_flagged;
        continue;
      }
      const std::vector<double>& scale = channel_scale[static_cast<std::size_t>(
          metadata.data_descriptions[static_cast<std::size_t>(dd[i])].spectral_window)];
      if (vis.ncolumn() != scale.size()) {
        throw InvalidInput(label + ": row " + std::to_string(row) + " holds " +
                           std::to_string(vis.ncolumn()) + " channels, its spectral window " +
                           std::to_string(scale.size()));
      }
      rotation.resize(scale.size());
      for (std::size_t c = 0; c < scale.size(); ++c) {
        const double phase = (p2 - p1) * scale[c];
        rotation[c] = std::polar(1.0, phase);
      }
      for (std::size_t c = 0; c < vis.ncolumn(); ++c)
        for (std::size_t p = 0; p < vis.nrow(); ++p) {
          // In double, rounded once: the stored phase is then exact to float precision.
          const std::complex<double> v = std::complex<double>(vis(p, c)) * rotation[c];
          vis(p, c) = casacore::Complex(static_cast<float>(v.real()), static_cast<float>(v.imag()));
        }
      corrected.put(row, vis);
    }
  }
  out.flush();
  append_history(temporary / "HISTORY", plan.history,
                 plan.time_mjd_s.empty() ? 0.0 : plan.time_mjd_s.back(), "skyphase export");
  return result;
}

}  // namespace wvr::archive
