// Night -> corrected MeasurementSet: the correction plan from /results/correction, then the
// casacore copy under a temporary name beside the output, renamed into place when complete.
#include <sstream>

#include "archive/atomic_output.hpp"
#include "archive/casacore_guard.hpp"
#include "archive/ms_corrected_data.hpp"
#include "archive/night_correction_plan.hpp"
#include "wvr/measurement_set.hpp"

namespace wvr {

MsExport export_measurement_set(const Night& night,
                                const std::filesystem::path& ms,
                                const std::filesystem::path& output,
                                const MsExportOptions& options) {
  archive::CorrectionPlan plan = archive::correction_plan_of(night, options.site);
  archive::check_output_path(output, ms, options.overwrite_output);
  std::ostringstream history;
  history << "libwvr: CORRECTED_DATA = DATA with the radiometer phase correction of night "
          << night.time_epoch_utc << " applied per antenna (baseline i-j: DATA * exp(i (phi_j - "
          << "phi_i))), interpolated in time and scaled from " << plan.obs_freq_ghz
          << " GHz to each channel with the wet dispersion of the site (" << plan.site_description
          << "); cross-correlation rows without a correction flagged";
  plan.history = history.str();

  MsExport result;
  archive::write_then_rename(output, [&](const std::filesystem::path& temporary) {
    archive::with_casacore_errors(ms.string(), [&] {
      const archive::CorrectedCopyResult copy = archive::write_corrected_copy(
          ms, temporary, plan, night.antenna_count(), options.chunk_rows);
      result.rows = copy.rows;
      result.rows_flagged = copy.rows_flagged;
    });
  });
  if (result.rows_flagged > 0)
    result.notes.push_back(
        std::to_string(result.rows_flagged) +
        " cross-correlation rows flagged: no radiometer correction at their time");
  return result;
}

}  // namespace wvr
