// libFuzzer target: a night file (HDF5) of arbitrary bytes through wvr::read_night.
#include "fuzz_support.hpp"
#include "wvr/night_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::filesystem::path path = wvr::fuzz::as_file(data, size, ".h5");
  wvr::fuzz::expect_only_wvr_errors([&] { (void)wvr::read_night(path); });
  return 0;
}
