// Calibrator phase of a row: the argument of the sum of unflagged parallel-hand visibilities
// over channels, i.e. of the flag-aware channel and polarisation average. The row's baseline is
// (ANTENNA1, ANTENNA2) and its phase is taken as phase(ANTENNA2) - phase(ANTENNA1): with
// V_12 = <E_1 E_2*> and fields varying as exp(+i 2 pi nu t), an excess path L on antenna 2
// delays its field and adds +2 pi nu L / c to arg V_12 (sign convention from memory; see
// ARCHIVE.md). Radiometer brightness of a sample is the mean of its unflagged correlations.
#include "archive/ms_main_table.hpp"

#include <casacore/casa/Arrays/Array.h>
#include <casacore/casa/Arrays/Matrix.h>
#include <casacore/casa/Arrays/Slicer.h>
#include <casacore/casa/Arrays/Vector.h>
#include <casacore/casa/BasicSL/Complex.h>
#include <casacore/casa/Exceptions/Error.h>
#include <casacore/tables/Tables/ArrayColumn.h>
#include <casacore/tables/Tables/ScalarColumn.h>

#include <algorithm>
#include <cmath>
#include <complex>

#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {

MainTableContents read_main_table(const std::filesystem::path& ms,
                                  const MsMetadata& metadata,
                                  const MainTableRequest& request) {
  const std::string label = ms.string();
  const casacore::Table main = open_table_read_only(ms);
  for (const char* c : {"TIME", "INTERVAL", "ANTENNA1", "ANTENNA2", "DATA_DESC_ID", "SCAN_NUMBER",
                        "FIELD_ID", "STATE_ID", "FLAG", "FLAG_ROW"})
    require_column(main, label, c);
  const bool has_float_data = main.tableDesc().isColumn("FLOAT_DATA");
  const bool has_data = main.tableDesc().isColumn("DATA");
  if (!has_data && !has_float_data)
    throw InvalidInput(label + ": the main table has neither DATA nor FLOAT_DATA");

  casacore::ScalarColumn<double> time(main, "TIME"), interval(main, "INTERVAL");
  casacore::ScalarColumn<int> antenna1(main, "ANTENNA1"), antenna2(main, "ANTENNA2"),
      data_desc(main, "DATA_DESC_ID"), scan_number(main, "SCAN_NUMBER"), field_id(main, "FIELD_ID"),
      state_id(main, "STATE_ID");
  casacore::ScalarColumn<bool> flag_row(main, "FLAG_ROW");
  casacore::ArrayColumn<bool> flag(main, "FLAG");
  casacore::ArrayColumn<casacore::Complex> data;
  casacore::ArrayColumn<float> float_data;
  if (has_data) data.attach(main, "DATA");
  if (has_float_data) float_data.attach(main, "FLOAT_DATA");

  const std::size_t na = metadata.antenna_names.size();
  const std::size_t nc_rad =
      metadata.spectral_windows[static_cast<std::size_t>(request.radiometer_window)]
          .chan_freq_ghz.size();
  MainTableContents out;
  out.rows = main.nrow();
  const std::size_t chunk = std::max<std::size_t>(1, request.chunk_rows);
  casacore::Matrix<bool> flags;
  casacore::Matrix<casacore::Complex> vis;
  casacore::Matrix<float> real_values;
  std::vector<double> sum(nc_rad);
  std::vector<int> count(nc_rad);
  casacore::rownr_t row = 0;
  try {
    for (casacore::rownr_t start = 0; start < main.nrow(); start += chunk) {
      const casacore::rownr_t n = std::min<casacore::rownr_t>(chunk, main.nrow() - start);
      const casacore::Slicer rows(casacore::IPosition(1, static_cast<ssize_t>(start)),
                                  casacore::IPosition(1, static_cast<ssize_t>(n)));
      const casacore::Vector<double> t = time.getColumnRange(rows);
      const casacore::Vector<double> dt = interval.getColumnRange(rows);
      const casacore::Vector<int> a1 = antenna1.getColumnRange(rows);
      const casacore::Vector<int> a2 = antenna2.getColumnRange(rows);
      const casacore::Vector<int> dd = data_desc.getColumnRange(rows);
      const casacore::Vector<int> scan = scan_number.getColumnRange(rows);
      const casacore::Vector<int> field = field_id.getColumnRange(rows);
      const casacore::Vector<int> state = state_id.getColumnRange(rows);
      const casacore::Vector<bool> row_flagged = flag_row.getColumnRange(rows);
      for (casacore::rownr_t i = 0; i < n; ++i) {
        row = start + i;
        if (a1[i] < 0 || a2[i] < 0 || static_cast<std::size_t>(a1[i]) >= na ||
            static_cast<std::size_t>(a2[i]) >= na) {
          throw InvalidInput(label + ": row " + std::to_string(row) + " has ANTENNA1 = " +
                             std::to_string(a1[i]) + ", ANTENNA2 = " + std::to_string(a2[i]) +
                             " outside ANTENNA's " + std::to_string(na) + " rows");
        }
        if (dd[i] < 0 || static_cast<std::size_t>(dd[i]) >= metadata.data_descriptions.size()) {
          throw InvalidInput(label + ": row " + std::to_string(row) + " has DATA_DESC_ID = " +
                             std::to_string(dd[i]) + ", which DATA_DESCRIPTION does not hold");
        }
        if (!std::isfinite(t[i]))
          throw InvalidInput(label + ": row " + std::to_string(row) + " has a non-finite TIME");
        const DataDescription& desc = metadata.data_descriptions[static_cast<std::size_t>(dd[i])];
        if (desc.spectral_window == request.radiometer_window) {
          if (a1[i] != a2[i]) continue;  // radiometers give autocorrelations only
          RadiometerSample s{t[i], a1[i], field[i], false, out.radiometer_values.size()};
          flag.get(row, flags, true);
          // An MS may hold both columns, with the radiometer rows in either: FLOAT_DATA where
          // its cell is defined, DATA's real part otherwise.
          if (has_float_data && (!has_data || float_data.isDefined(row))) {
            float_data.get(row, real_values, true);
          } else {
            data.get(row, vis, true);
            real_values.resize(vis.shape());
            for (std::size_t k = 0; k < vis.nelements(); ++k)
              real_values.data()[k] = vis.data()[k].real();
          }
          if (real_values.ncolumn() != nc_rad || flags.shape() != real_values.shape()) {
            throw InvalidInput(label + ": radiometer row " + std::to_string(row) + " holds " +
                               std::to_string(real_values.ncolumn()) +
                               " channels, SPECTRAL_WINDOW " + std::to_string(nc_rad));
          }
          std::fill(sum.begin(), sum.end(), 0.0);
          std::fill(count.begin(), count.end(), 0);
          for (std::size_t c = 0; c < nc_rad; ++c)
            for (std::size_t p = 0; p < real_values.nrow(); ++p)
              if (!flags(p, c) && std::isfinite(real_values(p, c))) {
                sum[c] += real_values(p, c);
                ++count[c];
              }
          s.valid = !row_flagged[i];
          for (std::size_t c = 0; c < nc_rad; ++c) {
            s.valid = s.valid && count[c] > 0;
            out.radiometer_values.push_back(count[c] > 0 ? sum[c] / count[c] : std::nan(""));
          }
          if (!s.valid) ++out.flagged_radiometer_samples;
          out.radiometer.push_back(s);
          continue;
        }
        if (a1[i] == a2[i]) continue;  // science autocorrelations carry no phase
        const StateIntent intent =
            state[i] >= 0 && static_cast<std::size_t>(state[i]) < metadata.states.size()
                ? metadata.states[static_cast<std::size_t>(state[i])]
                : StateIntent::kOther;
        auto [it, inserted] = out.scans.try_emplace(scan[i]);
        ScanRecord& sr = it->second;
        if (inserted) {
          sr = {t[i] - 0.5 * dt[i], t[i] + 0.5 * dt[i], field[i], intent, desc.spectral_window};
        } else {
          sr.start_mjd_s = std::min(sr.start_mjd_s, t[i] - 0.5 * dt[i]);
          sr.stop_mjd_s = std::max(sr.stop_mjd_s, t[i] + 0.5 * dt[i]);
          if (sr.intent == StateIntent::kOther) sr.intent = intent;
        }
        if (intent != StateIntent::kCalibrator) continue;
        if (!has_data || !data.isDefined(row)) {
          ++out.calibrator_rows_without_data;
          continue;
        }
        const int ref = request.reference_antenna;
        if (ref >= 0 && a1[i] != ref && a2[i] != ref) continue;
        if (row_flagged[i]) {
          ++out.flagged_calibrator_rows;
          continue;
        }
        data.get(row, vis, true);
        flag.get(row, flags, true);
        std::complex<double> total = 0.0;
        std::size_t used = 0;
        for (int p : desc.parallel_hands) {
          if (static_cast<std::size_t>(p) >= vis.nrow()) continue;
          for (std::size_t c = 0; c < vis.ncolumn(); ++c)
            if (!flags(static_cast<std::size_t>(p), c)) {
              total += std::complex<double>(vis(static_cast<std::size_t>(p), c));
              ++used;
            }
        }
        if (used == 0 || !std::isfinite(total.real()) || !std::isfinite(total.imag()) ||
            total == 0.0) {
          ++out.flagged_calibrator_rows;
          continue;
        }
        PhaseRecord pr{t[i],
                       {a1[i], a2[i]},
                       std::arg(total),
                       metadata.spectral_windows[static_cast<std::size_t>(desc.spectral_window)]
                           .mean_freq_ghz};
        if (ref >= 0 && a2[i] == ref) {  // stored as (reference, other)
          pr.antennas = {a2[i], a1[i]};
          pr.phase_rad = -pr.phase_rad;
        }
        out.calibrator_phases.push_back(pr);
      }
    }
  } catch (const casacore::AipsError& e) {
    throw InvalidInput(label + ": cannot read main-table row " + std::to_string(row) + " of " +
                       std::to_string(main.nrow()) +
                       " (is the MS cut short?): " + std::string(e.getMesg()));
  }
  return out;
}

}  // namespace wvr::archive
