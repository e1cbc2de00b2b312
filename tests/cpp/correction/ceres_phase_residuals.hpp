#pragma once
// The scaling solve's rows as Ceres cost functions (chord residuals with Jacobians in closed
// form): the same cost solved by Ceres' own Levenberg-Marquardt, the reference that the
// library's structured solver (correction/scaling_solver.hpp) is checked against.

#include <ceres/ceres.h>

#include <cmath>
#include <cstdint>
#include <initializer_list>

#include "correction/scaling_rows.hpp"

namespace wvr::detail {

// Chord residual of one phase: (cos obs - cos model, sin obs - sin model), with its derivative
// with respect to the model phase, (sin model, -cos model). The cost functions below give the
// Jacobians in closed form (the model is linear in each parameter), which is several times
// cheaper than automatic differentiation over a night's hundreds of thousands of rows.
struct Chord {
  double residual[2];
  double d_model[2];

  Chord(double observed_rad, double model_rad) {
    const double s = std::sin(model_rad), c = std::cos(model_rad);
    residual[0] = std::cos(observed_rad) - c;
    residual[1] = std::sin(observed_rad) - s;
    d_model[0] = s;
    d_model[1] = -c;
  }

  // Writes the residual and, for each parameter block wanted, d_model x d(model)/d(parameter).
  bool write(double* residuals,
             double** jacobians,
             std::initializer_list<double> d_parameter) const {
    residuals[0] = residual[0];
    residuals[1] = residual[1];
    if (jacobians == nullptr) return true;
    std::size_t block = 0;
    for (double d : d_parameter) {
      if (jacobians[block] != nullptr) {
        jacobians[block][0] = d_model[0] * d;
        jacobians[block][1] = d_model[1] * d;
      }
      ++block;
    }
    return true;
  }
};

// One baseline phase. Parameters: segment scale s, ratios r_a and r_b, offsets o_a and o_b;
// model = k s (r_b L_b - r_a L_a) + o_b - o_a.
class PhaseResidual final : public ceres::SizedCostFunction<2, 1, 1, 1, 1, 1> {
 public:
  explicit PhaseResidual(const Row& row) : row_(row) {}
  bool Evaluate(double const* const* p, double* residuals, double** jacobians) const override {
    const double scale = p[0][0], ratio_a = p[1][0], ratio_b = p[2][0];
    const double k = row_.k_rad_per_mm;
    const double model =
        k * scale * (ratio_b * row_.path_b_mm - ratio_a * row_.path_a_mm) + p[4][0] - p[3][0];
    return Chord(row_.phase_rad, model)
        .write(residuals, jacobians,
               {k * (ratio_b * row_.path_b_mm - ratio_a * row_.path_a_mm),
                -k * scale * row_.path_a_mm, k * scale * row_.path_b_mm, -1.0, 1.0});
  }

 private:
  Row row_;
};

// One antenna phase with its integration's common phase. Parameters: segment scale s, ratio r,
// offset o, common phase c; model = k s r L + o + c.
class AntennaPhaseResidual final : public ceres::SizedCostFunction<2, 1, 1, 1, 1> {
 public:
  explicit AntennaPhaseResidual(const AntennaRow& row) : row_(row) {}
  bool Evaluate(double const* const* p, double* residuals, double** jacobians) const override {
    const double scale = p[0][0], ratio = p[1][0];
    const double k = row_.k_rad_per_mm;
    const double model = k * scale * ratio * row_.path_mm + p[2][0] + p[3][0];
    return Chord(row_.phase_rad, model)
        .write(residuals, jacobians,
               {k * ratio * row_.path_mm, k * scale * row_.path_mm, 1.0, 1.0});
  }

 private:
  AntennaRow row_;
};

}  // namespace wvr::detail
