// Dispersive wet refractivity from the ITU-R P.676-13 Annex 1 water-line catalogue.
//
// Each line contributes N = S (F' + i F'') with the complex shape of dispersion_detail.hpp;
// its imaginary part is exactly the P.676 absorption (gamma = 0.1820 f N''): strengths and
// widths (Doppler term included) come from the same code as the absorption (p676_terms.hpp).
//
// The 1780 GHz pseudo-line is included in the dispersion. It stands in for the continuum,
// i.e. for the wings of the strong rotational lines above 1 THz that the catalogue omits.
// The orientation term k3 e/T^2 of the radio refractivity is the sum of the static line
// contributions 2 S / f0 (Van Vleck 1932, The Theory of Electric and Magnetic
// Susceptibilities, from memory); the lines below 1 THz give under a tenth of it, so most
// comes from lines above 1 THz, which add a positive dispersion 2 S f^2 / f0^3 below 1 THz,
// the same form as the pseudo-line's. Leaving the pseudo-line out would drop that part
// altogether. Its size is uncertain: the absorption fit fixes only the product S w of the
// pseudo-line, while its dispersion scales with S alone.
#include "wvr/dispersion.hpp"

#include <cmath>
#include <memory>
#include <numbers>
#include <string>

#include "absorption/dispersion_detail.hpp"
#include "absorption/p676_terms.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/refractivity.hpp"

namespace wvr {
namespace detail {

ComplexLineShape complex_line_shape(double freq_ghz,
                                    double f0_ghz,
                                    double width_ghz,
                                    double mixing) {
  const double below = f0_ghz - freq_ghz;
  const double above = f0_ghz + freq_ghz;
  const double w2 = width_ghz * width_ghz;
  const double d_below = below * below + w2;
  const double d_above = above * above + w2;
  const double scale = freq_ghz / f0_ghz;
  return {
      scale * ((below + mixing * width_ghz) / d_below - (above + mixing * width_ghz) / d_above),
      scale * ((width_ghz - mixing * below) / d_below + (width_ghz - mixing * above) / d_above)};
}

std::vector<WaterLineState> p676_water_line_states(const GasState& state) {
  // The strengths and widths of the absorption model, P.676-13 eqs. 3 and 6; water lines carry
  // no line mixing.
  std::vector<LineTerm<double>> terms;
  water_terms(state.dry_pressure_hpa, state.vapour_pressure_hpa, 300.0 / state.temperature_k, 1.0,
              terms);
  std::vector<WaterLineState> out;
  out.reserve(terms.size());
  for (const LineTerm<double>& t : terms) {
    out.push_back({t.f0_ghz, t.strength, t.width, t.f0_ghz == kContinuumPseudoLineGhz});
  }
  return out;
}

DispersiveRefractivityParts dispersive_wet_refractivity_parts(double freq_ghz,
                                                              const GasState& state) {
  // F'(0) = 0 for every line, so the sum below is already N'(f) - N'(0).
  DispersiveRefractivityParts parts;
  for (const WaterLineState& line : p676_water_line_states(state)) {
    const double n =
        line.strength_khz *
        complex_line_shape(freq_ghz, line.f0_ghz, line.width_ghz, 0.0).dispersive_per_ghz;
    (line.continuum_pseudo_line ? parts.continuum_pseudo_line_n : parts.lines_n) += n;
  }
  return parts;
}

}  // namespace detail

namespace {

// P.676-13 Annex 1 is stated for 1-1000 GHz.
void require_frequency(double freq_ghz) {
  require_in_range("freq_ghz", freq_ghz, 1.0, 1000.0, "GHz");
}

}  // namespace

double dispersive_wet_refractivity(double freq_ghz, const GasState& state) {
  require_frequency(freq_ghz);
  // Same physical ranges as AtmosphereProfile's layer checks.
  require_in_range("state.dry_pressure_hpa", state.dry_pressure_hpa, 0.0, 1200.0, "hPa");
  require_in_range("state.vapour_pressure_hpa", state.vapour_pressure_hpa, 0.0, 1200.0, "hPa");
  require_in_range("state.temperature_k", state.temperature_k, 100.0, 1500.0, "K");
  return detail::dispersive_wet_refractivity_parts(freq_ghz, state).total_n();
}

double wet_phase_per_path_factor(double freq_ghz, const AtmosphereProfile& profile) {
  require_frequency(freq_ghz);
  if (profile.size() == 0) throw InvalidInput("profile has no layers");
  // Zenith path: ds = layer thickness. The profile constructor has validated every layer.
  double dispersive_integral = 0.0;
  double wet_integral = 0.0;
  for (const AtmosphereLayer& layer : profile.layers()) {
    const GasState state = layer.gas_state();
    const double ds = layer.thickness_m();
    dispersive_integral +=
        detail::dispersive_wet_refractivity_parts(freq_ghz, state).total_n() * ds;
    wet_integral += wet_refractivity(state.vapour_pressure_hpa, state.temperature_k) * ds;
  }
  if (!(wet_integral > 0.0)) {
    throw InvalidInput(describe_value("profile.pwv_mm", profile.pwv_mm()) +
                       ": the profile has no water vapour, so the wet phase per path is undefined");
  }
  return 1.0 + dispersive_integral / wet_integral;
}

double wet_path_phase_rad(double path_m, double freq_ghz, double phase_per_path_factor) {
  require_finite("path_m", path_m);
  require_frequency(freq_ghz);
  require_finite("phase_per_path_factor", phase_per_path_factor);
  if (!(phase_per_path_factor > 0.0)) {
    throw InvalidInput(describe_value("phase_per_path_factor", phase_per_path_factor) +
                       " is not positive");
  }
  return 2.0 * std::numbers::pi * freq_ghz * 1e9 / constants::speed_of_light_m_per_s * path_m *
         phase_per_path_factor;
}

PhasePerPath PhasePerPath::non_dispersive() { return PhasePerPath(); }

PhasePerPath PhasePerPath::for_profile(AtmosphereProfile profile) {
  PhasePerPath out;
  out.profile_ = std::make_shared<const AtmosphereProfile>(std::move(profile));
  return out;
}

double PhasePerPath::factor(double freq_ghz) const {
  return profile_ ? wet_phase_per_path_factor(freq_ghz, *profile_) : 1.0;
}

double PhasePerPath::phase_rad(double path_m, double freq_ghz) const {
  return wet_path_phase_rad(path_m, freq_ghz, factor(freq_ghz));
}

PhasePerPath site_phase_per_path(const SiteParameters& site) {
  SiteParameters shape = site;
  shape.pwv_mm = 1.0;
  shape.surface_relative_humidity_pct.reset();
  return PhasePerPath::for_profile(make_parametric_profile(shape));
}

}  // namespace wvr
