// Night -> antenna-based gain table beside a MeasurementSet: the same correction plan as the
// corrected copy, written as casacore's calibration-table layout under a temporary name and
// renamed into place when complete.
#include <sstream>

#include "archive/atomic_output.hpp"
#include "archive/casacore_guard.hpp"
#include "archive/ms_gain_table.hpp"
#include "archive/night_correction_plan.hpp"
#include "wvr/measurement_set.hpp"

namespace wvr {

GainTableExport export_gain_table(const Night& night,
                                  const std::filesystem::path& ms,
                                  const std::filesystem::path& output,
                                  const GainTableOptions& options) {
  archive::CorrectionPlan plan = archive::correction_plan_of(night, options.site);
  archive::check_output_path(output, ms, options.overwrite_output);
  std::ostringstream history;
  history << "libwvr: antenna gains g_a = exp(i phi_a s) from the radiometer phase correction "
          << "of night " << night.time_epoch_utc << " (apply as V_ij / (g_i conj(g_j))), one per "
          << "correction sample and spectral window, phi scaled from " << plan.obs_freq_ghz
          << " GHz to each window's centre frequency with the wet dispersion of the site ("
          << plan.site_description << "); solutions without a correction flagged";
  plan.history = history.str();

  archive::GainTableRequest request;
  request.radiometer_window = options.radiometer_window;
  request.chunk_rows = options.chunk_rows;
  archive::GainTableResult written;
  archive::write_then_rename(output, [&](const std::filesystem::path& temporary) {
    archive::with_casacore_errors(ms.string(), [&] {
      written = archive::write_gain_table(ms, temporary, plan, night.antenna_count(), request);
    });
  });

  GainTableExport result;
  result.solutions = written.solutions;
  result.solutions_flagged = written.solutions_flagged;
  result.spectral_windows = written.spectral_windows;
  result.radiometer_window = written.radiometer_window;
  if (written.radiometer_window < 0)
    result.notes.push_back("no radiometer spectral window identified (" +
                           written.radiometer_search + "): every window has solutions");
  if (written.solutions_flagged > 0)
    result.notes.push_back(std::to_string(written.solutions_flagged) +
                           " solutions flagged: no usable radiometer correction at their time");
  return result;
}

}  // namespace wvr
