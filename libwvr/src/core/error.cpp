#include "wvr/error.hpp"

#include <cmath>
#include <sstream>

namespace wvr {

std::string describe_value(const std::string& field, double value) {
  std::ostringstream out;
  out.precision(10);
  out << field << " = " << value;
  return out.str();
}

void require_finite(const std::string& field, double value) {
  if (!std::isfinite(value)) throw InvalidInput(describe_value(field, value) + " is not finite");
}

void require_in_range(
    const std::string& field, double value, double lo, double hi, const std::string& unit) {
  require_finite(field, value);
  if (value < lo || value > hi) {
    std::ostringstream out;
    out << describe_value(field, value) << " is outside [" << lo << ", " << hi << "]";
    if (!unit.empty()) out << " " << unit;
    throw InvalidInput(out.str());
  }
}

}  // namespace wvr
