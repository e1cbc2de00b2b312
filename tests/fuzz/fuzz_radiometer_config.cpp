// libFuzzer target: radiometer files (TOML) through wvr::parse_radiometer_config.
#include "fuzz_support.hpp"
#include "wvr/radiometer.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  wvr::fuzz::expect_only_wvr_errors(
      [&] { (void)wvr::parse_radiometer_config(wvr::fuzz::as_text(data, size), "fuzz.toml"); });
  return 0;
}
