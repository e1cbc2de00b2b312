#include "archive/ms_scan_spans.hpp"

#include <casacore/casa/Arrays/Slicer.h>
#include <casacore/casa/Arrays/Vector.h>
#include <casacore/tables/Tables/ScalarColumn.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <string>
#include <tuple>

#include "archive/ms_tables.hpp"
#include "wvr/error.hpp"

namespace wvr::archive {

std::vector<ScanSpan> scan_spans(const std::filesystem::path& ms, std::size_t chunk_rows) {
  const std::string label = ms.string();
  const casacore::Table main = open_table_read_only(ms);
  for (const char* c :
       {"TIME", "INTERVAL", "SCAN_NUMBER", "FIELD_ID", "OBSERVATION_ID", "ANTENNA1", "ANTENNA2"})
    require_column(main, label, c);
  casacore::ScalarColumn<double> time(main, "TIME"), interval(main, "INTERVAL");
  casacore::ScalarColumn<int> scan(main, "SCAN_NUMBER"), field(main, "FIELD_ID"),
      observation(main, "OBSERVATION_ID"), antenna1(main, "ANTENNA1"), antenna2(main, "ANTENNA2");
  std::map<std::tuple<int, int, int>, ScanSpan> spans;
  const std::size_t chunk = std::max<std::size_t>(1, chunk_rows);
  for (casacore::rownr_t start = 0; start < main.nrow(); start += chunk) {
    const casacore::rownr_t n = std::min<casacore::rownr_t>(chunk, main.nrow() - start);
    const casacore::Slicer rows(casacore::IPosition(1, static_cast<ssize_t>(start)),
                                casacore::IPosition(1, static_cast<ssize_t>(n)));
    const casacore::Vector<double> t = time.getColumnRange(rows);
    const casacore::Vector<double> dt = interval.getColumnRange(rows);
    const casacore::Vector<int> s = scan.getColumnRange(rows), f = field.getColumnRange(rows),
                                o = observation.getColumnRange(rows),
                                a1 = antenna1.getColumnRange(rows),
                                a2 = antenna2.getColumnRange(rows);
    for (casacore::rownr_t i = 0; i < n; ++i) {
      if (a1[i] == a2[i]) continue;  // gains apply to cross-correlations
      if (!std::isfinite(t[i]))
        throw InvalidInput(label + ": TIME of row " + std::to_string(start + i) + " is not finite");
      const double half = std::isfinite(dt[i]) ? std::abs(dt[i]) / 2 : 0.0;
      const auto key = std::make_tuple(s[i], f[i], o[i]);
      auto [it, fresh] = spans.try_emplace(key);
      ScanSpan& span = it->second;
      if (fresh) {
        span = {s[i], f[i], o[i], t[i] - half, t[i] + half};
      } else {
        span.start_mjd_s = std::min(span.start_mjd_s, t[i] - half);
        span.stop_mjd_s = std::max(span.stop_mjd_s, t[i] + half);
      }
    }
  }
  if (spans.empty())
    throw InvalidInput(label +
                       ": no cross-correlation rows (ANTENNA1 != ANTENNA2): no "
                       "visibilities for a gain table to apply to");
  std::vector<ScanSpan> out;
  for (const auto& [key, span] : spans) out.push_back(span);
  std::sort(out.begin(), out.end(),
            [](const ScanSpan& a, const ScanSpan& b) { return a.start_mjd_s < b.start_mjd_s; });
  return out;
}

const ScanSpan& span_at(const std::vector<ScanSpan>& spans, double t) {
  const ScanSpan* best = &spans.front();
  double best_gap = std::numeric_limits<double>::infinity();
  for (const ScanSpan& s : spans) {
    const double gap = t < s.start_mjd_s ? s.start_mjd_s - t : std::max(0.0, t - s.stop_mjd_s);
    if (gap < best_gap) {
      best_gap = gap;
      best = &s;
    }
    if (gap == 0.0) break;
  }
  return *best;
}

}  // namespace wvr::archive
