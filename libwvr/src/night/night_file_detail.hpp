#pragma once
// Helpers shared by the night file sources (validation, reading, writing, summary).

#include <atomic>
#include <cstddef>
#include <optional>
#include <string>

#include "wvr/night.hpp"
#include "wvr/radiometer.hpp"

namespace wvr::detail {

// /radiometer attribute naming the brightness convention of brightness_k; libwvr writes
// "rayleigh_jeans_equivalent" (wvr/brightness_convention.hpp).
inline constexpr const char* kBrightnessConventionAttribute = "brightness_convention";

// Prefix of the /truth attributes that describe how the true sky differs from the site model
// ("true_sky.absorption_model" = "r17").
inline constexpr const char* kTrueSkyAttributePrefix = "true_sky.";

// Shortest text that reads back to the same double ("512", "0.1", "nan").
std::string format_number(double value);

// File spellings of the enumerations: "double"/"upper"/"lower", "calibrator"/"target".
std::string sideband_name(Sideband sideband);
std::optional<Sideband> parse_sideband(const std::string& name);
std::optional<ScanIntent> parse_intent(const std::string& name);

// Checks one result group on its own (names, shapes, units, attributes); `source` starts
// the message.
void validate_result_group(const ResultGroup& group, const std::string& source);

// read_night calls in this process: tests check with it that a read was left out.
extern std::atomic<std::size_t> night_file_reads;

}  // namespace wvr::detail
