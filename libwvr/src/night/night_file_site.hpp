#pragma once
// Reading and writing the optional /site record of a night file.

#include "night/night_file_h5.hpp"
#include "wvr/night.hpp"

namespace wvr::detail {

// Writes /site when the night has a site record.
void write_site_group(const h5::Writer& writer, const Night& night);
// Reads /site when the file has one (version-1 files never do).
void read_site_group(const h5::Reader& reader, Night& night);

}  // namespace wvr::detail
