// libFuzzer target: diagnosis thresholds files (TOML) through wvr::parse_diagnosis_thresholds.
#include "fuzz_support.hpp"
#include "wvr/diagnosis.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  wvr::fuzz::expect_only_wvr_errors(
      [&] { (void)wvr::parse_diagnosis_thresholds(wvr::fuzz::as_text(data, size), "fuzz.toml"); });
  return 0;
}
