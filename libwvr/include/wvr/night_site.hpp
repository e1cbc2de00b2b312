#pragma once
// Which site model a night is processed with: one policy for every command and call.
//
//   1. a site given by the user (a site file or Python's load_site) overrides everything;
//   2. otherwise the site record the night carries (/site, written by the simulator and the
//      importers);
//   3. otherwise documented defaults from the night itself: surface temperature, pressure and
//      relative humidity are the medians of /weather (the US Standard Atmosphere 1976 at the
//      array height when the night has no weather), the altitude is the array's reference
//      height, and the profile's shape takes the common textbook values: lapse rate 6.5 K/km
//      and tropopause 11 km (US Standard Atmosphere 1976), vapour scale height 2 km (ITU-R
//      P.835-6 reference atmosphere). The result says that defaults were used.

#include <optional>
#include <string>

#include "wvr/night.hpp"
#include "wvr/site_config.hpp"

namespace wvr {

enum class SiteSource {
  kGiven,         // the caller's site overrides the night's
  kNightRecord,   // the night's own /site record
  kNightDefaults  // defaults from the night's weather and array height
};
const char* to_string(SiteSource source);  // "given", "night record", "night defaults"

struct ResolvedSite {
  SiteConfig site;
  SiteSource source = SiteSource::kNightDefaults;
  // One line for people: where the parameters came from.
  std::string description;
};

// The site model to process `night` with (see the policy above). `given_description` names
// the given site in the description (e.g. its file name). Throws InvalidInput when the
// defaults cannot be formed (weather with non-finite values only).
ResolvedSite resolve_night_site(const Night& night,
                                const std::optional<SiteConfig>& given = std::nullopt,
                                const std::string& given_description = "given site");

// The documented defaults of step 3 on their own.
SiteConfig default_site_from_night(const Night& night);

}  // namespace wvr
