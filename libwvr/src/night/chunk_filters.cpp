#include "night/chunk_filters.hpp"

#include <zlib.h>

#include <algorithm>
#include <cmath>

#include "wvr/error.hpp"

namespace wvr::detail::h5 {

std::atomic<std::size_t> filtered_chunks_written{0};
std::atomic<std::size_t> filtered_chunks_read{0};

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

std::vector<std::uint8_t> unshuffled(const std::vector<std::uint8_t>& planes,
                                     std::size_t element_size) {
  const std::size_t elements = planes.size() / element_size;
  if (element_size <= 1 || elements <= 1) return planes;
  std::vector<std::uint8_t> out(planes.size());
  for (std::size_t b = 0; b < element_size; ++b) {
    const std::uint8_t* plane = planes.data() + b * elements;
    for (std::size_t e = 0; e < elements; ++e) out[e * element_size + b] = plane[e];
  }
  std::copy(planes.begin() + static_cast<std::ptrdiff_t>(elements * element_size), planes.end(),
            out.begin() + static_cast<std::ptrdiff_t>(elements * element_size));
  return out;
}

void append_checksum(std::vector<std::uint8_t>& bytes) {
  const std::uint32_t sum = hdf5_fletcher32(bytes.data(), bytes.size());
  for (int k = 0; k < 4; ++k) bytes.push_back(static_cast<std::uint8_t>(sum >> (8 * k)));
}

void check_and_strip_checksum(std::vector<std::uint8_t>& bytes) {
  if (bytes.size() < 4) throw DamagedChunk("is too short to hold its Fletcher-32 checksum");
  const std::size_t data_bytes = bytes.size() - 4;
  std::uint32_t stored = 0;
  for (int k = 0; k < 4; ++k)
    stored |= static_cast<std::uint32_t>(bytes[data_bytes + k]) << (8 * k);
  if (stored != hdf5_fletcher32(bytes.data(), data_bytes)) {
    throw DamagedChunk("fails its Fletcher-32 checksum (damaged file)");
  }
  bytes.resize(data_bytes);
}

// The inflated size is the chunk's, plus four bytes for a checksum taken before deflate (a
// pipeline with Fletcher-32 ahead of deflate); the size after every filter is checked at the end.
std::vector<std::uint8_t> inflated(const std::vector<std::uint8_t>& stored,
                                   std::size_t chunk_bytes) {
  std::vector<std::uint8_t> out(chunk_bytes + 4);
  uLongf out_bytes = static_cast<uLongf>(out.size());
  const int status =
      uncompress(out.data(), &out_bytes, stored.data(), static_cast<uLong>(stored.size()));
  if (status != Z_OK) {
    throw DamagedChunk("does not inflate to its " + std::to_string(chunk_bytes) +
                       " bytes (zlib status " + std::to_string(status) + "; damaged file)");
  }
  out.resize(out_bytes);
  return out;
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

std::vector<std::uint8_t> unfilter_chunk(std::vector<std::uint8_t> stored,
                                         const std::vector<ChunkFilter>& pipeline,
                                         std::uint32_t filter_mask,
                                         std::size_t chunk_bytes,
                                         std::size_t element_size) {
  for (std::size_t i = pipeline.size(); i-- > 0;) {
    if ((filter_mask >> i) & 1u) continue;
    switch (pipeline[i]) {
      case ChunkFilter::kFletcher32:
        check_and_strip_checksum(stored);
        break;
      case ChunkFilter::kDeflate:
        stored = inflated(stored, chunk_bytes);
        break;
      case ChunkFilter::kShuffle:
        stored = unshuffled(stored, element_size);
        break;
    }
  }
  if (stored.size() != chunk_bytes) {
    throw DamagedChunk("holds " + std::to_string(stored.size()) + " bytes, expected " +
                       std::to_string(chunk_bytes) + " (damaged file)");
  }
  ++filtered_chunks_read;
  return stored;
}

}  // namespace wvr::detail::h5
