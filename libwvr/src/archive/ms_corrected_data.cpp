#include "archive/ms_corrected_data.hpp"

#include <casacore/casa/Arrays/Array.h>
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

// The antennas' phases at one row time, each interpolated once however many baselines use it
// (rows of one integration share their time).
class PhasesAtTime {
 public:
  PhasesAtTime(const CorrectionPlan& plan, std::size_t antennas)
      : plan_(plan), phase_(antennas), state_(antennas, kUnknown) {}

  bool get(std::size_t a, double t, double* phase) {
    if (t != time_ || !have_time_) {
      std::fill(state_.begin(), state_.end(), kUnknown);
      time_ = t;
      have_time_ = true;
    }
    if (state_[a] == kUnknown) state_[a] = phase_at(plan_, a, t, &phase_[a]) ? kUsable : kUnusable;
    *phase = phase_[a];
    return state_[a] == kUsable;
  }

 private:
  enum State : unsigned char { kUnknown, kUsable, kUnusable };
  const CorrectionPlan& plan_;
  std::vector<double> phase_;
  std::vector<State> state_;
  double time_ = 0.0;
  bool have_time_ = false;
};

// The copy starts as the input's files: a plain table is a directory of files and casacore's
// own Table::copy copies them as such (casacore 3.5, BaseTable::copy, from memory), which is
// many times faster than a value-by-value deepCopy. Other table kinds (a reference table
// selecting rows of another) are materialised value by value.
void copy_table(const std::filesystem::path& ms, const std::filesystem::path& temporary) {
  const casacore::Table input = open_table_read_only(ms);
  require_column(input, ms.string(), "DATA");
  if (input.tableType() == casacore::Table::Plain) {
    namespace fs = std::filesystem;
    try {
      fs::copy(ms, temporary, fs::copy_options::recursive);
      // An archive's files are often read-only; the copy is ours to write.
      fs::permissions(temporary, fs::perms::owner_write, fs::perm_options::add);
      for (const fs::directory_entry& entry : fs::recursive_directory_iterator(temporary))
        fs::permissions(entry.path(), fs::perms::owner_write, fs::perm_options::add);
    } catch (const fs::filesystem_error& e) {
      throw InvalidInput(ms.string() + ": cannot copy it to " + temporary.string() + ": " +
                         e.code().message());
    }
  } else {
    input.deepCopy(temporary.string(), casacore::Table::New, true);
  }
}

// A run of consecutive rows whose cells have one shape: read and written as one array.
struct RowRun {
  casacore::rownr_t start = 0;
  casacore::rownr_t rows = 0;
};

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
  copy_table(ms, temporary);
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
  PhasesAtTime phases(plan, antennas);
  casacore::Array<casacore::Complex> vis;
  casacore::Array<bool> flags;
  std::vector<casacore::IPosition> shapes;
  std::vector<RowRun> runs;
  std::vector<std::uint8_t> row_flagged;
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
    shapes.resize(n);
    runs.clear();
    for (casacore::rownr_t i = 0; i < n; ++i) {
      if (!data.isDefined(start + i))
        throw InvalidInput(label + ": row " + std::to_string(start + i) + " has no DATA array");
      shapes[i] = data.shape(start + i);
      if (runs.empty() || shapes[i] != shapes[i - 1]) runs.push_back({i, 0});
      ++runs.back().rows;
    }
    row_flagged.assign(n, 0);
    bool any_flagged = false;
    for (const RowRun& run : runs) {
      const casacore::Slicer run_rows(
          casacore::IPosition(1, static_cast<ssize_t>(start + run.start)),
          casacore::IPosition(1, static_cast<ssize_t>(run.rows)));
      data.getColumnRange(run_rows, vis, true);
      bool contiguous = false;
      casacore::Complex* cells = vis.getStorage(contiguous);
      const std::size_t correlations = static_cast<std::size_t>(shapes[run.start][0]);
      const std::size_t channels =
          shapes[run.start].size() > 1 ? static_cast<std::size_t>(shapes[run.start][1]) : 1;
      for (casacore::rownr_t k = 0; k < run.rows; ++k) {
        const casacore::rownr_t i = run.start + k;
        const casacore::rownr_t row = start + i;
        if (a1[i] == a2[i]) continue;  // autocorrelations: the antenna's phase cancels
        if (a1[i] < 0 || a2[i] < 0 || static_cast<std::size_t>(a1[i]) >= antennas ||
            static_cast<std::size_t>(a2[i]) >= antennas || dd[i] < 0 ||
            static_cast<std::size_t>(dd[i]) >= metadata.data_descriptions.size()) {
          throw InvalidInput(label + ": row " + std::to_string(row) +
                             " refers to an antenna or data description that does not exist");
        }
        double p1 = 0.0, p2 = 0.0;
        const bool ok = phases.get(static_cast<std::size_t>(a1[i]), t[i], &p1) &&
                        phases.get(static_cast<std::size_t>(a2[i]), t[i], &p2);
        if (!ok) {  // left as DATA, flagged below
          row_flagged[i] = 1;
          any_flagged = true;
          ++result.rows_flagged;
          continue;
        }
        const std::vector<double>& scale = channel_scale[static_cast<std::size_t>(
            metadata.data_descriptions[static_cast<std::size_t>(dd[i])].spectral_window)];
        if (channels != scale.size()) {
          throw InvalidInput(label + ": row " + std::to_string(row) + " holds " +
                             std::to_string(channels) + " channels, its spectral window " +
                             std::to_string(scale.size()));
        }
        rotation.resize(scale.size());
        for (std::size_t c = 0; c < scale.size(); ++c) {
          const double phase = (p2 - p1) * scale[c];
          rotation[c] = std::polar(1.0, phase);
        }
        casacore::Complex* cell = cells + k * correlations * channels;
        for (std::size_t c = 0; c < channels; ++c)
          for (std::size_t p = 0; p < correlations; ++p) {
            // In double, rounded once: the stored phase is then exact to float precision.
            casacore::Complex& value = cell[c * correlations + p];
            const std::complex<double> v = std::complex<double>(value) * rotation[c];
            value = casacore::Complex(static_cast<float>(v.real()), static_cast<float>(v.imag()));
          }
      }
      vis.putStorage(cells, contiguous);
      corrected.putColumnRange(run_rows, vis);
      if (any_flagged) {
        // Rows without a correction: every FLAG of the row set, and FLAG_ROW.
        bool run_has_flagged = false;
        for (casacore::rownr_t k = 0; k < run.rows; ++k)
          run_has_flagged |= row_flagged[run.start + k] != 0;
        if (run_has_flagged) {
          flag.getColumnRange(run_rows, flags, true);
          bool flags_contiguous = false;
          bool* flag_cells = flags.getStorage(flags_contiguous);
          const std::size_t per_row = flags.nelements() / run.rows;
          for (casacore::rownr_t k = 0; k < run.rows; ++k)
            if (row_flagged[run.start + k])
              std::fill(flag_cells + k * per_row, flag_cells + (k + 1) * per_row, true);
          flags.putStorage(flag_cells, flags_contiguous);
          flag.putColumnRange(run_rows, flags);
        }
      }
    }
    if (any_flagged) {
      casacore::Vector<bool> row_flags = flag_row.getColumnRange(rows);
      for (casacore::rownr_t i = 0; i < n; ++i)
        if (row_flagged[i]) row_flags[i] = true;
      flag_row.putColumnRange(rows, row_flags);
    }
  }
  out.flush();
  append_history(temporary / "HISTORY", plan.history,
                 plan.time_mjd_s.empty() ? 0.0 : plan.time_mjd_s.back(), "skyphase export");
  return result;
}

}  // namespace wvr::archive
