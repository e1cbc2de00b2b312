// libFuzzer target: radiosonde sounding CSV files through wvr::read_sounding_csv and, when they
// read, wvr::profile_from_sounding.
#include "fuzz_support.hpp"
#include "wvr/sounding.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::filesystem::path path = wvr::fuzz::as_file(data, size, ".csv");
  wvr::fuzz::expect_only_wvr_errors([&] {
    const std::vector<wvr::SoundingLevel> levels = wvr::read_sounding_csv(path);
    (void)wvr::profile_from_sounding(levels);
  });
  return 0;
}
