#pragma once
// Structure functions and wind of a night's phase screen, for night diagnosis.
//
// 1. Spatial structure function per baseline, D(d) in m^2 of path:
//    * from the calibrator phases (observed or corrected): the variance of the baseline phase
//      about each calibrator scan's circular mean (wrap-aware deviations), pooled over the
//      scans and converted to path with lambda / 2 pi (so nights at different frequencies
//      compare; the path is the effective one at the observing frequency, dispersion
//      included). The per-scan offsets of calibration are unknown, so only fluctuations within
//      a scan are seen: the estimate is capped near D(|v| * scan length) and is a temporal
//      quantity mapped onto baselines, not the full spatial D of long baselines.
//    * from the radiometer paths (AntennaPaths): the variance of L_b - L_a about its mean over
//      long windows (default: the whole night). Var(L_b - L_a) = 2 sigma^2 - 2 B(d) = D(d), so
//      with windows long compared to d / |v| this is the full spatial structure function up
//      to the outer scale; the per-antenna constants of the retrieval drop out with the mean.
//    Baseline length d is the horizontal (east, north) distance between the antennas, NOT the
//    projection onto the sky plane: all lines of sight are parallel, so two antennas cross a
//    horizontal layer at points whose separation is their ground separation (the pierce-point
//    offset h / tan(el) toward the azimuth is common to all antennas). The slant geometry
//    scales D by the airmass factor but leaves the shape (slopes, break) alone.
// 2. A broken power law fitted to D(d) in log-log with Ceres:
//      ln D = ln A + alpha_short x + (alpha_long - alpha_short) w ln(1 + e^(x / w)),
//      x = ln(d / d_break),
//    i.e. two power laws whose asymptotes meet at d_break (value A there), joined smoothly
//    over a width w in ln d; optionally saturating, D_sat (1 - exp(-D / D_sat)).
//    For the slab (von Karman) spectrum of wvr/phase_screen.hpp the asymptotes are
//    D ~ W d^(5/3) and D ~ W^2 d^(2/3); they meet at d = 0.343 W (closed form in
//    slab_break_over_thickness()). The slab's transition is broad and asymmetric: the thick
//    slope falls short of 5/3 by ~0.4 (d / W)^(1/3) (the finite slab cuts off the z
//    integral: D = a W d^(5/3) - b W^(2/3) d^2 + ...), so a fit with a free transition width
//    puts the break further out, at about 0.58 W (measured on the LayerSpectrum curve over
//    W/100 .. 30 W, the same for W = 100 m .. 1 km). The break is kept only when it lowers the
//    Bayesian information criterion against a single power law.
//    On one- to few-hour nights the km-scale points carry the sample variance of a few
//    independent screen patches; the broken power law then often puts its break at a wiggle
//    (slopes scattering by 0.3 and more between nights).
// 2b. The slab model itself, D = D(W) g(d / W), fitted for the equivalent layer thickness W
//    (fit_slab_thickness): one shape parameter instead of three, so it is far steadier. A
//    night's W still carries the sample variance of its screen (600 m layer, one-hour nights:
//    sd 0.38 in ln W; six pooled: 0.11), so night_slab_thickness / pooled_slab_thickness
//    state an interval from a jackknife over time groups (wvr/structure_fits.hpp). Its W is the
//    "break length" the diagnosis reports; slopes are measured in each regime relative to it.
// 3. Temporal structure function per antenna or per baseline path series vs lag (through
//    wvr::temporal_structure_function).
// 4. Wind under frozen flow: the lag tau_ab maximising the cross-correlation of two
//    antennas' high-passed path series satisfies tau_ab = b_ab . u with u = v / |v|^2 (the
//    screen at antenna b repeats antenna a's after the time the flow takes to carry it along
//    the baseline). A weighted least-squares fit of u over many pairs gives the velocity of the
//    screen relative to the pierce points (their slow drift with the source is not removed).
//
// Usage:
//   wvr::SpatialStructureResult sf = wvr::radiometer_structure_function(night, paths);
//   wvr::StructureFunctionEstimate binned = wvr::bin_structure_function(sf);
//   wvr::BrokenPowerLawFit fit = wvr::fit_broken_power_law(binned.separation, binned.value_m2);
//   wvr::SlabThicknessFit slab = wvr::fit_slab_thickness(binned.separation, binned.value_m2);
//   wvr::WindEstimate wind = wvr::estimate_wind(night, paths);
//
// Headers, one concept each: wvr/diagnostic_status.hpp, wvr/spatial_structure.hpp,
// wvr/structure_fits.hpp, wvr/temporal_structure.hpp, wvr/wind.hpp; this one includes them all.

#include "wvr/diagnostic_status.hpp"
#include "wvr/spatial_structure.hpp"
#include "wvr/structure_fits.hpp"
#include "wvr/temporal_structure.hpp"
#include "wvr/wind.hpp"
