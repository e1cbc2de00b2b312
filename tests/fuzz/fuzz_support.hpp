#pragma once
// What every fuzz target shares: the input handed to a reader either as text or as a file, and
// the rule that the only acceptable failure is one of libwvr's own errors. Any other exception
// (std::out_of_range, std::bad_variant_access, a parser's own type, ...) would reach the user
// as a library internal, so it aborts the run and libFuzzer keeps the input.

#include <unistd.h>

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <filesystem>
#include <fstream>
#include <string>

#include "wvr/error.hpp"

namespace wvr::fuzz {

template <typename Read>
void expect_only_wvr_errors(Read read) {
  try {
    read();
  } catch (const wvr::Error&) {
    // The reader refused the input in the project's words: the expected outcome.
  } catch (const std::exception& error) {
    std::fprintf(stderr, "finding: a reader let a foreign exception escape: %s\n", error.what());
    std::abort();
  }
}

inline std::string as_text(const std::uint8_t* data, std::size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

// The input as a file in a per-process scratch directory (a tmpfs when there is one); the
// readers under test take paths.
inline std::filesystem::path as_file(const std::uint8_t* data,
                                     std::size_t size,
                                     const char* extension) {
  static const std::filesystem::path directory = [] {
    const std::filesystem::path shm = "/dev/shm";
    const std::filesystem::path base =
        std::filesystem::is_directory(shm) ? shm : std::filesystem::temp_directory_path();
    std::filesystem::path d = base / ("wvr-fuzz-" + std::to_string(::getpid()));
    std::filesystem::create_directories(d);
    return d;
  }();
  const std::filesystem::path path = directory / (std::string("input") + extension);
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  return path;
}

}  // namespace wvr::fuzz
