#pragma once
// Gaseous absorption models behind one small interface.
//
// The radiative transfer only ever asks an AbsorptionModel for absorption coefficients at a
// list of frequencies for one gas state, so a second published model (Rosenkranz, Liebe
// MPM) can be added by implementing this interface without touching the transfer code.
// See DEVELOPERS.md, "Adding an absorption model".

#include <memory>
#include <span>
#include <string>
#include <vector>

namespace wvr {

// Thermodynamic state of one layer of air. Pressures follow the ITU-R P.676 Annex 1
// convention: dry-air partial pressure p and water-vapour partial pressure e, total = p + e.
struct GasState {
  double dry_pressure_hpa = 0.0;
  double vapour_pressure_hpa = 0.0;
  double temperature_k = 0.0;
};

// Partial derivatives of an absorption coefficient (Np/m) with respect to the gas state.
struct AbsorptionPartials {
  double d_dry_pressure_per_hpa = 0.0;
  double d_vapour_pressure_per_hpa = 0.0;
  double d_temperature_per_k = 0.0;
};

class AbsorptionModel {
 public:
  virtual ~AbsorptionModel() = default;

  // Short model name with its source, e.g. "ITU-R P.676-13 Annex 1".
  virtual std::string name() const = 0;

  // Absorption coefficients (Np/m) at each freq_ghz[i] for one gas state: dry_np_per_m[i]
  // holds oxygen lines plus the dry-air continuum, water_np_per_m[i] water-vapour lines
  // plus the water-vapour continuum. Spans must have equal sizes. No validation: callers
  // check ranges at the API boundary.
  virtual void absorption(std::span<const double> freq_ghz,
                          const GasState& state,
                          std::span<double> dry_np_per_m,
                          std::span<double> water_np_per_m) const = 0;

  // Total coefficient (dry + water, Np/m) and its partial derivatives, for Jacobians.
  virtual void total_absorption_with_partials(std::span<const double> freq_ghz,
                                              const GasState& state,
                                              std::span<double> total_np_per_m,
                                              std::span<AbsorptionPartials> partials) const = 0;
};

// ITU-R P.676-13 (08/2022) Annex 1 line-by-line model: all 44 oxygen lines of Table 1 with
// line mixing, all 35 water-vapour lines of Table 2 (the 1780 GHz pseudo-line carries the
// water-vapour continuum), and the Debye + pressure-induced nitrogen dry continuum
// (eqs. 1-9). Valid 1-1000 GHz.
std::shared_ptr<const AbsorptionModel> make_p676_annex1_model();

// The same model with the strength of the 1780 GHz pseudo-line (P.676's representation of the
// water-vapour continuum) multiplied by water_continuum_scale, e.g. 1.12 for a continuum 12 %
// stronger: used to simulate skies that differ from the retrieval's model.
std::shared_ptr<const AbsorptionModel> make_p676_annex1_model(double water_continuum_scale);

// Water vapour of the Rosenkranz (2017) model (15 lines up to 916 GHz with a 750 GHz
// local-line cutoff, and its own self and foreign continuum, scaled by water_continuum_scale),
// with oxygen and the dry continuum of ITU-R P.676-13 Annex 1. Sources and formulas in
// testdata/reference/rosenkranz-2017/README.md. Valid 1-1000 GHz.
std::shared_ptr<const AbsorptionModel> make_rosenkranz2017_model(
    double water_continuum_scale = 1.0);

// Short keys of the selectable models: "p676" (ITU-R P.676-13, the default everywhere) and
// "r17" (Rosenkranz 2017 water vapour).
inline constexpr const char* kDefaultAbsorptionModel = "p676";
const std::vector<std::string>& absorption_model_keys();

// The model named by its key, its water-vapour continuum scaled by water_continuum_scale.
// Throws InvalidInput naming `field` and the value for an unknown key.
std::shared_ptr<const AbsorptionModel> make_absorption_model(
    const std::string& key,
    double water_continuum_scale = 1.0,
    const std::string& field = "absorption_model");

// Specific attenuation in dB/km (the P.676 unit) from a coefficient in Np/m.
inline double db_per_km_from_np_per_m(double np_per_m) { return np_per_m * 4342.944819032518; }

}  // namespace wvr
