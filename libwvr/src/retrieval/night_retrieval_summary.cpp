#include <array>
#include <cmath>

#include "core/statistics.hpp"
#include "wvr/night_retrieval.hpp"

namespace wvr {

std::span<const NightRetrievalSummaryField> night_retrieval_summary_fields() {
  using S = NightRetrievalSummary;
  static const std::array<NightRetrievalSummaryField, 8> fields = {{
      {"antennas", &S::antennas, "1", "antennas of the night"},
      {"samples", &S::samples, "1", "samples of all antennas (antennas x samples per antenna)"},
      {"samples_flagged", &S::samples_flagged, "1", "samples the retrieval could not use"},
      {"pwv_median_mm", &S::pwv_median_mm, "mm", "median PWV over the usable samples"},
      {"pwv_p10_mm", &S::pwv_p10_mm, "mm", "10th percentile of PWV over the usable samples"},
      {"pwv_p90_mm", &S::pwv_p90_mm, "mm", "90th percentile of PWV over the usable samples"},
      {"chi2_per_dof_median", &S::chi2_per_dof_median, "1",
       "median chi-square per degree of freedom of the per-sample inversions"},
      {"path_sensitivity_k_per_mm", &S::path_sensitivity_k_per_mm, "K/mm",
       "per channel: brightness per mm of wet path, median over antennas and windows"},
  }};
  return fields;
}

NightRetrievalSummary summarize(const NightRetrieval& r) {
  NightRetrievalSummary s;
  s.antennas = r.antennas;
  s.samples = r.antennas * r.samples;
  std::vector<double> pwv, chi2;
  for (std::size_t i = 0; i < r.flags.size(); ++i) {
    if (r.flags[i] & kRetrievalUnusable) {
      ++s.samples_flagged;
      continue;
    }
    pwv.push_back(r.pwv_mm[i]);
    chi2.push_back(r.chi2_per_dof[i]);
  }
  s.pwv_median_mm = detail::finite_quantile(pwv, 0.5);
  s.pwv_p10_mm = detail::finite_quantile(pwv, 0.1);
  s.pwv_p90_mm = detail::finite_quantile(pwv, 0.9);
  s.chi2_per_dof_median = detail::finite_quantile(chi2, 0.5);
  for (std::size_t c = 0; c < r.channels; ++c) {
    std::vector<double> values;
    for (std::size_t aw = 0; aw < r.antennas * r.windows; ++aw) {
      const double v = r.path_sensitivity_k_per_mm[aw * r.channels + c];
      if (std::isfinite(v)) values.push_back(v);
    }
    s.path_sensitivity_k_per_mm.push_back(detail::finite_quantile(values, 0.5));
  }
  return s;
}

}  // namespace wvr
