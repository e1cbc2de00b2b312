#include "night/chunk_filters.hpp"

#include <zlib.h>

#include <algorithm>
#include <cmath>

#include "wvr/error.hpp"

namespace wvr::detail::h5 {

std::atomic<std::size_t> filtered_chunks_written{0};

std::uint32_t hdf5_fletcher32(const std::uint8_t* data, std::size_t bytes) {
  std::uint32_t sum1 = 0, sum2 = 0;
  std::size_t words = bytes / 2;
  // 360 words keep both sums below 2^32 before they are folded.
  while (words > 0) {
    std::size_t block = std::min<std::size_t>(words, 360);
    words -= block;
    do {
      sum1 += (static_cast<std::uint32_t>(data[0]) << 8) | data[1];
      data += 2;
      sum2 += sum1;
    } while (--block > 0);
    sum1 = (sum1 & 0xffff) + (sum1 >> 16);
    sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  }
  if (bytes % 2 != 0) {
    sum1 += static_cast<std::uint32_t>(data[0]) << 8;
    sum2 += sum1;
    sum1 = (sum1 & 0xffff) + (sum1 >> 16);
    sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  }
  sum1 = (sum1 & 0xffff) + (sum1 >> 16);
  sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  return (sum2 << 16) | sum1;
}

namespace {

std::vector<std::uint8_t> shuffled(const std::uint8_t* chunk,
                                   std::size_t bytes,
                                   std::size_t element_size) {
  std::vector<std::uint8_t> out(bytes);
  const std::size_t elements = bytes / element_size;
  if (element_size <= 1 || elements <= 1) {
    std::copy(chunk, chunk + bytes, out.begin());
    return out;
  }
  for (std::size_t b = 0; b < element_size; ++b) {
    std::uint8_t* plane = out.data() + b * elements;
    for (std::size_t e = 0; e < elements; ++e) plane[e] = chunk[e * element_size + b];
  }
  // Bytes past the last whole element stay at the end, as HDF5's shuffle leaves them.
  std::copy(chunk + elements * element_size, chunk + bytes, out.begin() + elements * element_size);
  return out;
}

void append_checksum(std::vector<std::uint8_t>& bytes) {
  const std::uint32_t sum = hdf5_fletcher32(bytes.data(), bytes.size());
  for (int k = 0; k < 4; ++k) bytes.push_back(static_cast<std::uint8_t>(sum >> (8 * k)));
}

}  // namespace

FilteredChunk filter_chunk(const std::uint8_t* chunk,
                           std::size_t bytes,
                           std::size_t element_size,
                           int gzip_level) {
  FilteredChunk out;
  std::vector<std::uint8_t> input = shuffled(chunk, bytes, element_size);
  // HDF5's deflate budget: H5Z_DEFLATE_SIZE_ADJUST(s) = ceil(s * (double)1.001F) + 12.
  uLongf compressed_bytes = static_cast<uLongf>(
      std::ceil(static_cast<double>(bytes) * static_cast<double>(1.001F)) + 12.0);
  out.bytes.resize(compressed_bytes + 4);
  const int status = compress2(out.bytes.data(), &compressed_bytes, input.data(),
                               static_cast<uLong>(bytes), gzip_level);
  if (status == Z_OK) {
    out.bytes.resize(compressed_bytes);
  } else if (status == Z_BUF_ERROR) {  // would grow: stored shuffled, deflate skipped
    out.bytes = std::move(input);
    out.filter_mask |= 1u << kDeflateFilterIndex;
  } else {
    throw Error("zlib compress2 failed with status " + std::to_string(status));
  }
  append_checksum(out.bytes);
  return out;
}

}  // namespace wvr::detail::h5
