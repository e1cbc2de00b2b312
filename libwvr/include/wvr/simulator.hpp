#pragma once
// Synthetic observing nights with known truth.
//
// The simulator turns a Scenario into a Night (wvr/night.hpp) whose radiometer brightness
// comes from the sky model and whose calibrator phases come from the true path:
// 1. The array, the source track (elevation/azimuth per time) and the scan cycle.
// 2. One frozen-flow path screen per turbulent layer (wvr/phase_screen.hpp). Each antenna
//    samples a layer where its line of sight pierces it (offset h / tan(el) toward the
//    azimuth); the zenith path of a thin layer grows with airmass 1/sin(el) along the slant.
// 3. Wet layers change the vapour column each antenna sees: the line-of-sight PWV (as a
//    zenith-equivalent column) is the night's mean PWV plus the wet screen path divided by the
//    zenith wet path per mm of PWV; the vapour profile keeps its shape. Dry layers change the
//    path only.
// 4. Brightness: FastSkyModel (exact to < 0.02 K) at that PWV, elevation and cloud liquid,
//    built on the scenario's true sky (TrueSky: its absorption model and water continuum
//    scale, and a lapse rate, vapour scale height or inversion that may differ from the site
//    file the night records for the retrieval), plus Gaussian channel noise, the radiometers'
//    calibration errors (offset and gain per antenna and channel, drifting linearly) and the
//    scenario's radiometer faults.
// 5. Calibrator phases during calibrator scans: 2 pi nu / c times the baseline difference of
//    true slant path (wet path times the dispersion factor of wvr/dispersion.hpp, plus dry)
//    plus thermal noise, wrapped to (-pi, pi].
// 6. Truth: slant wet path (including the mean column), slant dry-air fluctuation path (the
//    hydrostatic mean, common to all antennas, is left out), line-of-sight PWV, and labelled
//    episodes (clouds, faults, labelled turbulence), the calibration errors and how the true
//    sky differs from the site model.
// Deterministic for a given scenario seed, whatever the thread count.

#include "wvr/night.hpp"
#include "wvr/scenario.hpp"

namespace wvr {

struct SimulationOptions {
  int threads = 0;  // 0 = all hardware threads
};

struct SimulationReport {
  double screen_seconds = 0.0;      // generating the path screens
  double brightness_seconds = 0.0;  // paths, sky model, noise and faults
  double phase_seconds = 0.0;       // calibrator phases
  std::size_t screen_bytes = 0;
};

// Throws InvalidInput for an invalid scenario or a source that sets below the sky model's
// minimum elevation during the night.
Night simulate_night(const Scenario& scenario,
                     const SimulationOptions& options = {},
                     SimulationReport* report = nullptr);

}  // namespace wvr
