#pragma once
// Dispersion of wet refractivity near water lines: the phase of a path at a submillimetre
// observing frequency is larger (or smaller) than 2 pi nu L / c computed with the radio
// (non-dispersive) refractivity, because of the real part of the water-vapour line shapes.
//
// The dispersive refractivity uses the same ITU-R P.676-13 Annex 1 water-line catalogue and
// line widths as the absorption (wvr/absorption.hpp): N_disp(f) = N'(f) - N'(0), so it
// vanishes at low frequency by construction.

#include <memory>

#include "wvr/absorption.hpp"
#include "wvr/atmosphere.hpp"

namespace wvr {

// Dispersive part of the wet refractivity (N-units, i.e. 1e-6) at freq_ghz for one gas state.
double dispersive_wet_refractivity(double freq_ghz, const GasState& state);

// phase_per_path factor of a profile along the zenith: 1 + (integral of N_disp) / (integral of
// the non-dispersive wet refractivity N_w), so that the wet phase is
// (2 pi nu / c) * L_wet * factor.
double wet_phase_per_path_factor(double freq_ghz, const AtmosphereProfile& profile);

// The wet phase per path of an atmosphere as a function of observing frequency: the one
// policy that calibration, correction, diagnosis and the night pipeline use to turn a wet
// path into phase, phase = (2 pi nu / c) L_wet factor(nu). Cheap to copy (copies share the
// profile); thread-safe.
class PhasePerPath {
 public:
  // factor(nu) = 1 at every frequency: no dispersion (low frequencies, tests).
  static PhasePerPath non_dispersive();
  // The dispersion of a profile's vapour (wet_phase_per_path_factor).
  static PhasePerPath for_profile(AtmosphereProfile profile);

  // Dimensionless factor at freq_ghz (throws InvalidInput outside the dispersion model's range).
  double factor(double freq_ghz) const;
  double operator()(double freq_ghz) const { return factor(freq_ghz); }
  // Phase (rad) of a wet path at freq_ghz.
  double phase_rad(double path_m, double freq_ghz) const;
  bool dispersive() const { return profile_ != nullptr; }

 private:
  std::shared_ptr<const AtmosphereProfile> profile_;  // null: non-dispersive
};

// The phase per path of a site's parametric atmosphere. The factor is a ratio of integrals over
// the vapour profile, so the site's PWV and humidity do not enter (1 mm is used).
PhasePerPath site_phase_per_path(const SiteParameters& site);

// Phase (rad) of a wet path at freq_ghz: 2 pi nu / c * path_m * factor.
double wet_path_phase_rad(double path_m, double freq_ghz, double phase_per_path_factor);

}  // namespace wvr
