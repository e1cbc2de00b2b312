// libFuzzer target: scenario files (TOML) through wvr::parse_scenario. Site and radiometer
// files named in the input are looked up under the project's testdata directory, so the seed
// scenarios resolve and mutations of their names are refused.
#include "fuzz_support.hpp"
#include "wvr/scenario.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  wvr::fuzz::expect_only_wvr_errors([&] {
    (void)wvr::parse_scenario(wvr::fuzz::as_text(data, size), "fuzz.toml", WVR_TESTDATA_DIR);
  });
  return 0;
}
