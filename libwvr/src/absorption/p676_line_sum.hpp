#pragma once
// The line sum of ITU-R P.676-13 Annex 1 (eq. 5: sum over lines of S_i F_i(f)) evaluated for
// many frequencies at once. The line parameters of one gas state are computed once (with
// their gradients when wanted) and laid out per field, so the inner loop runs over
// frequencies without dependencies between iterations and compiles to wide vector code.
// Partial derivatives use the analytic derivative of the line shape, so no automatic
// differentiation type enters the loop.
#include <array>
#include <cstddef>
#include <span>
#include <vector>

#include "absorption/p676_terms.hpp"

namespace wvr::detail {

// Line parameters of one gas state, one array per field. The gradients are with respect to
// (dry pressure, vapour pressure, temperature); empty when only values were asked for.
struct LineTable {
  std::vector<double> f0_ghz, strength, width, mixing;
  std::array<std::vector<double>, 3> d_strength, d_width, d_mixing;
  bool has_mixing = false;

  void assign(const std::vector<LineTerm<double>>& terms);
  void assign(const std::vector<LineTerm<ceres::Jet<double, 3>>>& terms);
  std::size_t size() const { return f0_ghz.size(); }
};

// sum[i] += sum over lines of S F(freq[i]) in line order.
void add_line_sum(std::span<const double> freq_ghz, const LineTable& lines, std::span<double> sum);

// The same with the gradient: gradient[k][i] += d(sum[i]) / d(state k).
void add_line_sum_with_gradient(std::span<const double> freq_ghz,
                                const LineTable& lines,
                                std::span<double> sum,
                                const std::array<std::span<double>, 3>& gradient);

}  // namespace wvr::detail
