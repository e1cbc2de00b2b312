// Accessors of the night value types and the spellings the night file uses.

#include <charconv>
#include <cmath>

#include "night/night_file_detail.hpp"
#include "wvr/night.hpp"

namespace wvr {

std::string to_string(ScanIntent intent) {
  return intent == ScanIntent::kCalibrator ? "calibrator" : "target";
}

std::size_t ResultDataset::element_count() const {
  std::size_t count = 1;
  for (std::size_t n : shape) count *= n;
  return count;
}

const ResultDataset* ResultGroup::find(const std::string& dataset_name) const {
  for (const ResultDataset& dataset : datasets) {
    if (dataset.name == dataset_name) return &dataset;
  }
  return nullptr;
}

std::span<const double> Night::antenna_brightness_k(std::size_t antenna) const {
  const std::size_t block = time_count() * channel_count();
  return std::span<const double>(radiometer.brightness_k).subspan(antenna * block, block);
}

std::span<const std::uint8_t> Night::antenna_valid(std::size_t antenna) const {
  return std::span<const std::uint8_t>(radiometer.valid)
      .subspan(antenna * time_count(), time_count());
}

const ResultGroup* Night::find_result(const std::string& stage) const {
  for (const ResultGroup& group : results) {
    if (group.stage == stage) return &group;
  }
  return nullptr;
}

namespace detail {

std::string format_number(double value) {
  if (std::isnan(value)) return "nan";
  if (std::isinf(value)) return value > 0 ? "inf" : "-inf";
  char buffer[32];
  const auto result = std::to_chars(buffer, buffer + sizeof buffer, value);
  return std::string(buffer, result.ptr);
}

std::string sideband_name(Sideband sideband) {
  switch (sideband) {
    case Sideband::kUpper:
      return "upper";
    case Sideband::kLower:
      return "lower";
    case Sideband::kDouble:
      break;
  }
  return "double";
}

std::optional<Sideband> parse_sideband(const std::string& name) {
  if (name == "double") return Sideband::kDouble;
  if (name == "upper") return Sideband::kUpper;
  if (name == "lower") return Sideband::kLower;
  return std::nullopt;
}

std::optional<ScanIntent> parse_intent(const std::string& name) {
  if (name == "calibrator") return ScanIntent::kCalibrator;
  if (name == "target") return ScanIntent::kTarget;
  return std::nullopt;
}

}  // namespace detail
}  // namespace wvr
