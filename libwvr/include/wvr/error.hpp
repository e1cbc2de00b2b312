#pragma once
// Errors raised at libwvr's API boundary.
//
// Every function that validates user input throws InvalidInput with a message naming the
// offending field and its value, e.g. "elevation_deg = 3.2 is below the model's 5 deg
// minimum". Hot per-sample paths never throw: they return status and flags instead.

#include <stdexcept>
#include <string>

namespace wvr {

// Base class of every exception libwvr throws.
class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Bad input: out-of-range or non-finite values, malformed configuration, unreadable or
// inconsistent files. Python sees it as wvr.WvrValueError (a ValueError).
class InvalidInput : public Error {
 public:
  using Error::Error;
};

// Valid input that holds nothing a stage can use: every radiometer sample flagged or
// implausible, no calibrator row to solve on. The message says why, with counts. The command
// line exits with status 3 on it; Python sees wvr.WvrNothingUsable (a WvrError).
class NothingUsable : public Error {
 public:
  using Error::Error;
};

// Builds "field = value" text for error messages with enough digits to identify the value.
std::string describe_value(const std::string& field, double value);

// Throws InvalidInput("<field> = <value> <reason>") unless the value is finite.
void require_finite(const std::string& field, double value);

// Throws InvalidInput unless lo <= value <= hi (and finite). `unit` is appended to the
// bounds in the message, e.g. "elevation_deg = 3 is outside [5, 90] deg".
void require_in_range(
    const std::string& field, double value, double lo, double hi, const std::string& unit = "");

}  // namespace wvr
