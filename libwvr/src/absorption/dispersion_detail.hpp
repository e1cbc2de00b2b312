#pragma once
// Internals of the dispersive wet refractivity (wvr/dispersion.hpp), exposed for tests.

#include <vector>

#include "wvr/absorption.hpp"

namespace wvr::detail {

// Real (dispersive, F') and imaginary (absorptive, F'') parts of the complex line shape of
// Liebe (1989), Int. J. Infrared Millim. Waves 10, 631 (from memory):
//   F   = (f / f0) [(1 - i delta) / (f0 - f - i w) - (1 + i delta) / (f0 + f + i w)],
//   F'' = (f / f0) [(w - delta (f0 - f)) / ((f0 - f)^2 + w^2)
//                   + (w - delta (f0 + f)) / ((f0 + f)^2 + w^2)],
//   F'  = (f / f0) [((f0 - f) + delta w) / ((f0 - f)^2 + w^2)
//                   - ((f0 + f) + delta w) / ((f0 + f)^2 + w^2)].
// F'' is the line shape of ITU-R P.676-13 Annex 1 (eq. 5, number from memory). F has poles
// only at f = +/- f0 - i w, so F' and F'' are a Kramers-Kronig pair; F' vanishes at f = 0
// because the line's static contribution 2 S / f0 is already in the radio refractivity.
// Frequencies and width in GHz, shapes in GHz^-1.
struct ComplexLineShape {
  double dispersive_per_ghz = 0.0;
  double absorptive_per_ghz = 0.0;
};
ComplexLineShape complex_line_shape(double freq_ghz,
                                    double f0_ghz,
                                    double width_ghz,
                                    double mixing);

// One ITU-R P.676-13 Annex 1 Table 2 water line evaluated for a gas state: strength S
// (eq. 3, kHz, so that S F is in N-units) and width including the Doppler term (eq. 6b).
struct WaterLineState {
  double f0_ghz = 0.0;
  double strength_khz = 0.0;
  double width_ghz = 0.0;
  bool continuum_pseudo_line = false;  // the 1780 GHz entry standing in for the continuum
};
std::vector<WaterLineState> p676_water_line_states(const GasState& state);

// Dispersive wet refractivity (N-units) split into the real water lines (22-988 GHz) and the
// 1780 GHz continuum pseudo-line. No validation.
struct DispersiveRefractivityParts {
  double lines_n = 0.0;
  double continuum_pseudo_line_n = 0.0;
  double total_n() const { return lines_n + continuum_pseudo_line_n; }
};
DispersiveRefractivityParts dispersive_wet_refractivity_parts(double freq_ghz,
                                                              const GasState& state);

}  // namespace wvr::detail
