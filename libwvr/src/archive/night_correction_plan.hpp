#pragma once
// The correction plan of a night: /results/correction read and checked, times moved to MJD
// seconds, and the dispersion scaling of the site. Shared by the corrected-copy and gain-table
// exports so that both apply the same phases.

#include <optional>

#include "archive/correction_plan.hpp"
#include "wvr/night.hpp"
#include "wvr/site_config.hpp"

namespace wvr::archive {

// Throws InvalidInput when the night has no /results/correction or it is malformed (the
// message names the dataset or attribute), or the epoch is not YYYY-MM-DDThh:mm:ssZ. `site`
// absent: the night's site policy (wvr/night_site.hpp). The history message is left empty.
CorrectionPlan correction_plan_of(const Night& night, const std::optional<SiteConfig>& site);

}  // namespace wvr::archive
