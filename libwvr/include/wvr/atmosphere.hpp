#pragma once
// Layered atmosphere profiles: parametric (site + lapse rate + vapour scale height) or from a
// sounding, discretised into layers fine near the ground and coarser aloft.

#include <optional>
#include <vector>

#include "wvr/absorption.hpp"

namespace wvr {

// One homogeneous layer. Heights are above mean sea level; temperature and pressure are
// taken at mid-height and vapour density is the layer mean (so the column is exact). With the
// default grid, doubling the layer count changes channel brightness by < 0.02 K
// (sky_model_test).
struct AtmosphereLayer {
  double base_m = 0.0;
  double top_m = 0.0;
  double pressure_hpa = 0.0;  // total pressure
  double temperature_k = 0.0;
  double vapour_density_kg_m3 = 0.0;
  double liquid_density_kg_m3 = 0.0;  // cloud liquid water content

  double thickness_m() const { return top_m - base_m; }
  double mid_m() const { return 0.5 * (base_m + top_m); }
  double vapour_pressure_hpa() const;
  // P.676 convention: dry pressure = total - vapour.
  GasState gas_state() const;
};

class AtmosphereProfile {
 public:
  AtmosphereProfile() = default;
  // Validates contiguity (each layer's base is the previous top), positive thickness and
  // physical ranges (T 100-1500 K, 0 < P <= 1200 hPa, vapour pressure below total pressure,
  // non-negative densities, all finite). Throws InvalidInput naming the layer index.
  explicit AtmosphereProfile(std::vector<AtmosphereLayer> layers);

  const std::vector<AtmosphereLayer>& layers() const { return layers_; }
  std::size_t size() const { return layers_.size(); }
  double ground_altitude_m() const { return layers_.front().base_m; }
  double top_altitude_m() const { return layers_.back().top_m; }

  // Precipitable water vapour (mm = kg/m^2): the vertical vapour column.
  double pwv_mm() const;
  // Vertical cloud liquid water path (kg/m^2 = mm).
  double liquid_water_path_kg_m2() const;

  // The same profile with every vapour density multiplied so that pwv_mm() == pwv_mm.
  // Throws InvalidInput for a negative or non-finite target, or a profile without vapour.
  AtmosphereProfile scaled_to_pwv(double pwv_mm) const;
  // The same profile with a uniform liquid cloud between base_above_ground_m and
  // base_above_ground_m + thickness_m, holding liquid_water_path_kg_m2 in total (added to any
  // existing liquid). Layers partly inside the cloud get the overlapping share.
  AtmosphereProfile with_cloud(double base_above_ground_m,
                               double thickness_m,
                               double liquid_water_path_kg_m2) const;

 private:
  std::vector<AtmosphereLayer> layers_;
};

// Optional temperature inversion: from base_above_ground_m the temperature rises by
// temperature_jump_k linearly over depth_m, then resumes the tropospheric lapse rate.
struct Inversion {
  double base_above_ground_m = 0.0;
  double depth_m = 0.0;
  double temperature_jump_k = 0.0;
};

// A site described by a few numbers. Exactly one of pwv_mm and
// surface_relative_humidity_pct must be set.
struct SiteParameters {
  double altitude_m = 0.0;  // above mean sea level
  double surface_temperature_k = 288.15;
  double surface_pressure_hpa = 1013.25;
  double lapse_rate_k_per_km = 6.5;  // temperature decrease with height in the troposphere
  double tropopause_m = 11000.0;     // above mean sea level; isothermal above
  double water_scale_height_m = 2000.0;
  std::optional<double> pwv_mm;
  std::optional<double> surface_relative_humidity_pct;
  std::optional<Inversion> inversion;

  // Throws InvalidInput naming the first field out of its physical range.
  void validate() const;
};

// Vertical discretisation. Layer boundaries follow z_k = H (exp(b k / n) - 1) / (exp(b) - 1)
// above the ground (H = top - ground, b = 4.5): ~40 m at the ground for n = 48, coarser
// aloft; model knots (tropopause, inversion edges, sounding levels) are added as boundaries.
struct LayerGrid {
  int layer_count = 48;
  double top_altitude_m = 40000.0;  // above mean sea level

  void validate() const;
};

// Parametric profile: temperature falls at the lapse rate up to the tropopause (plus the
// optional inversion), then stays constant; pressure follows hydrostatic equilibrium of dry
// air with gravity decreasing as (R/(R+z))^2 (integrated numerically, 10 m steps; the
// virtual-temperature correction, < 0.3 % of pressure for PWV < 20 mm, is neglected); vapour
// density falls exponentially with water_scale_height_m from its surface value, set either
// from surface relative humidity (P.453 saturation pressure over water) or scaled so that
// the layered column equals pwv_mm.
AtmosphereProfile make_parametric_profile(const SiteParameters& site, const LayerGrid& grid = {});

namespace detail {
// Mean over a layer of a quantity that varies exponentially between its end values a and b:
// (b - a) / ln(b / a). Used for vapour density so that the layered column is exact.
double logarithmic_mean(double a, double b);
}  // namespace detail

// Layer boundaries (heights above sea level) of the geometric grid from ground to top plus the
// given knots; exposed for profile builders and tests.
std::vector<double> layer_boundaries(double ground_m,
                                     double top_m,
                                     int layer_count,
                                     const std::vector<double>& knots_m);

}  // namespace wvr
