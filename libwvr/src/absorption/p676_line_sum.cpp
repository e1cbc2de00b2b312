#include "absorption/p676_line_sum.hpp"

#include "core/simd_dispatch.hpp"

namespace wvr::detail {

void LineTable::assign(const std::vector<LineTerm<double>>& terms) {
  const std::size_t n = terms.size();
  f0_ghz.resize(n);
  strength.resize(n);
  width.resize(n);
  mixing.resize(n);
  has_mixing = false;
  for (std::size_t j = 0; j < n; ++j) {
    f0_ghz[j] = terms[j].f0_ghz;
    strength[j] = terms[j].strength;
    width[j] = terms[j].width;
    mixing[j] = terms[j].mixing;
    has_mixing = has_mixing || mixing[j] != 0.0;
  }
  for (int k = 0; k < 3; ++k) {
    d_strength[k].clear();
    d_width[k].clear();
    d_mixing[k].clear();
  }
}

void LineTable::assign(const std::vector<LineTerm<ceres::Jet<double, 3>>>& terms) {
  const std::size_t n = terms.size();
  f0_ghz.resize(n);
  strength.resize(n);
  width.resize(n);
  mixing.resize(n);
  for (int k = 0; k < 3; ++k) {
    d_strength[k].resize(n);
    d_width[k].resize(n);
    d_mixing[k].resize(n);
  }
  has_mixing = false;
  for (std::size_t j = 0; j < n; ++j) {
    const LineTerm<ceres::Jet<double, 3>>& t = terms[j];
    f0_ghz[j] = t.f0_ghz;
    strength[j] = t.strength.a;
    width[j] = t.width.a;
    mixing[j] = t.mixing.a;
    has_mixing = has_mixing || t.mixing.a != 0.0 || !t.mixing.v.isZero();
    for (int k = 0; k < 3; ++k) {
      d_strength[k][j] = t.strength.v[k];
      d_width[k][j] = t.width.v[k];
      d_mixing[k][j] = t.mixing.v[k];
    }
  }
}

namespace {

// eq. 5 line shape: F = (f/f0) [(w - d (f0 - f)) / ((f0 - f)^2 + w^2) +
//                                (w - d (f0 + f)) / ((f0 + f)^2 + w^2)].
WVR_VECTOR_CLONES
void add_lines(const double* __restrict freq,
               std::size_t nf,
               const LineTable& lines,
               bool with_mixing,
               double* __restrict sum) {
  for (std::size_t j = 0; j < lines.size(); ++j) {
    const double f0 = lines.f0_ghz[j];
    const double s = lines.strength[j];
    const double w = lines.width[j];
    const double d = with_mixing ? lines.mixing[j] : 0.0;
    const double w2 = w * w;
    const double inv_f0 = 1.0 / f0;
    for (std::size_t i = 0; i < nf; ++i) {
      const double f = freq[i];
      const double below = f0 - f;
      const double above = f0 + f;
      const double d_below = below * below + w2;
      const double d_above = above * above + w2;
      // One division for both denominators.
      const double inv_product = 1.0 / (d_below * d_above);
      const double shape =
          f * inv_f0 * ((w - d * below) * d_above + (w - d * above) * d_below) * inv_product;
      sum[i] += s * shape;
    }
  }
}

// With dF/dw = (f/f0) sum_{x = below, above} (1 - 2 w q_x) / D_x, q_x = (w - d x) / D_x,
// D_x = x^2 + w^2, and dF/dd = -(f/f0) sum_x x / D_x.
WVR_VECTOR_CLONES
void add_lines_with_gradient(const double* __restrict freq,
                             std::size_t nf,
                             const LineTable& lines,
                             bool with_mixing,
                             double* __restrict sum,
                             double* __restrict g0,
                             double* __restrict g1,
                             double* __restrict g2) {
  for (std::size_t j = 0; j < lines.size(); ++j) {
    const double f0 = lines.f0_ghz[j];
    const double s = lines.strength[j];
    const double w = lines.width[j];
    const double d = with_mixing ? lines.mixing[j] : 0.0;
    const double ds0 = lines.d_strength[0][j], ds1 = lines.d_strength[1][j],
                 ds2 = lines.d_strength[2][j];
    const double dw0 = lines.d_width[0][j], dw1 = lines.d_width[1][j], dw2 = lines.d_width[2][j];
    const double dd0 = with_mixing ? lines.d_mixing[0][j] : 0.0;
    const double dd1 = with_mixing ? lines.d_mixing[1][j] : 0.0;
    const double dd2 = with_mixing ? lines.d_mixing[2][j] : 0.0;
    const double w2 = w * w;
    const double inv_f0 = 1.0 / f0;
    for (std::size_t i = 0; i < nf; ++i) {
      const double f = freq[i];
      const double ratio = f * inv_f0;
      const double below = f0 - f;
      const double above = f0 + f;
      const double d_below = below * below + w2;
      const double d_above = above * above + w2;
      // One division for both denominators.
      const double inv_product = 1.0 / (d_below * d_above);
      const double inv_below = d_above * inv_product;
      const double inv_above = d_below * inv_product;
      const double q_below = (w - d * below) * inv_below;
      const double q_above = (w - d * above) * inv_above;
      const double shape = ratio * (q_below + q_above);
      const double s_d_shape_d_width =
          s * ratio *
          ((1.0 - 2.0 * w * q_below) * inv_below + (1.0 - 2.0 * w * q_above) * inv_above);
      const double s_d_shape_d_mixing = -s * ratio * (below * inv_below + above * inv_above);
      sum[i] += s * shape;
      g0[i] += ds0 * shape + s_d_shape_d_width * dw0 + s_d_shape_d_mixing * dd0;
      g1[i] += ds1 * shape + s_d_shape_d_width * dw1 + s_d_shape_d_mixing * dd1;
      g2[i] += ds2 * shape + s_d_shape_d_width * dw2 + s_d_shape_d_mixing * dd2;
    }
  }
}

}  // namespace

void add_line_sum(std::span<const double> freq_ghz, const LineTable& lines, std::span<double> sum) {
  add_lines(freq_ghz.data(), freq_ghz.size(), lines, lines.has_mixing, sum.data());
}

void add_line_sum_with_gradient(std::span<const double> freq_ghz,
                                const LineTable& lines,
                                std::span<double> sum,
                                const std::array<std::span<double>, 3>& gradient) {
  add_lines_with_gradient(freq_ghz.data(), freq_ghz.size(), lines, lines.has_mixing, sum.data(),
                          gradient[0].data(), gradient[1].data(), gradient[2].data());
}

}  // namespace wvr::detail
