// libFuzzer target: site files (TOML) through wvr::parse_site_config.
#include "fuzz_support.hpp"
#include "wvr/site_config.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  wvr::fuzz::expect_only_wvr_errors(
      [&] { (void)wvr::parse_site_config(wvr::fuzz::as_text(data, size), "fuzz.toml"); });
  return 0;
}
