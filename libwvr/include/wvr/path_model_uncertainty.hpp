#pragma once
// Model uncertainty of the path coefficients: how much the radiometer's path estimate changes
// when the sky follows one absorption model and the retrieval another.
//
// The retrieval turns brightness changes into path with the minimum-variance combination of
// its model's path sensitivities s_a (K per mm of slant wet path):
//   w_c = (s_a,c / sigma_c^2) / sum_k (s_a,k^2 / sigma_k^2),   dL = sum_c w_c dT_c,
// so sum_c w_c s_a,c = 1. If the sky's sensitivities are s_b instead, a true path change dL
// produces dT_c = s_b,c dL and the estimate is (sum_c w_c s_b,c) dL: the path coefficients are
// off by the factor
//   path_scale = sum_c w_c s_b,c,   relative error = path_scale - 1.
// This is the number a scaling solve can use as the width of its prior on the path scale
// (e.g. prior sigma = |relative error| when the sky may follow either model). It depends on
// the radiometer, the profile (PWV, temperatures) and the elevation.
//
// Example:
//   auto d = wvr::compare_path_coefficients(profile, radiometer, 60.0,
//                                           wvr::SkyModel(wvr::make_absorption_model("p676")),
//                                           wvr::SkyModel(wvr::make_absorption_model("r17")));
//   double prior_sigma = std::abs(d.path_scale_relative_error);

#include <string>
#include <vector>

#include "wvr/atmosphere.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/sky_model.hpp"

namespace wvr {

struct PathCoefficientComparison {
  std::string model_a, model_b;  // names of the retrieval's model (a) and the sky's (b)
  // Per channel.
  std::vector<double> brightness_a_k, brightness_b_k;  // RJ-equivalent passband averages
  std::vector<double> path_sensitivity_a_k_per_mm, path_sensitivity_b_k_per_mm;
  std::vector<double> path_sensitivity_relative_difference;  // (s_b - s_a) / s_a
  std::vector<double> combination_weight_a_mm_per_k;         // w_c of model a
  // sum_c w_c s_b,c (1 when the models agree) and path_scale - 1.
  double path_scale = 1.0;
  double path_scale_relative_error = 0.0;
};

// Both models on the same profile, radiometer (channel noise_k weights the combination; a
// noise below 1 mK counts as 1 mK) and elevation. Throws InvalidInput as SkyModel::channels.
PathCoefficientComparison compare_path_coefficients(const AtmosphereProfile& profile,
                                                    const RadiometerConfig& radiometer,
                                                    double elevation_deg,
                                                    const SkyModel& model_a,
                                                    const SkyModel& model_b);

// |path_scale_relative_error| between the ITU-R P.676-13 and the Rosenkranz (2017) water-vapour
// models for a site (its profile shape scaled to pwv_mm) seen at elevation_deg: the relative
// model uncertainty of the path coefficients, for the prior of the scaling solve.
double path_coefficient_model_uncertainty(const SiteParameters& site,
                                          const RadiometerConfig& radiometer,
                                          double pwv_mm,
                                          double elevation_deg);

}  // namespace wvr
