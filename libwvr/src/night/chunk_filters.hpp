#pragma once
// The night file's filter pipeline (byte shuffle, deflate, Fletcher-32) applied to one chunk
// outside HDF5, so that the chunks of a dataset can be compressed on several threads and then
// stored with H5Dwrite_chunk. HDF5 runs its own filters on one thread, under its global lock.
// The bytes must equal what HDF5's filters make of the same chunk: the night file tests read
// the stored chunks back with H5Dread_chunk and compare them with HDF5's own.
#include <atomic>
#include <cstddef>
#include <cstdint>
#include <vector>

namespace wvr::detail::h5 {

// Position of deflate in the pipeline the writer sets up (shuffle, deflate, checksum): bit i
// of a chunk's filter mask set means filter i was skipped for that chunk.
inline constexpr unsigned kDeflateFilterIndex = 1;

// Chunks stored through this pipeline in this process: tests check with it that the writer
// took this path.
extern std::atomic<std::size_t> filtered_chunks_written;

struct FilteredChunk {
  std::vector<std::uint8_t> bytes;  // as stored in the file
  std::uint32_t filter_mask = 0;
};

// HDF5's Fletcher-32 (H5_checksum_fletcher32, HDF5 1.10 src/H5checksum.c, from memory): sums
// of big-endian 16-bit words, folded every 360 words; an odd last byte is the high byte of a
// last word.
std::uint32_t hdf5_fletcher32(const std::uint8_t* data, std::size_t bytes);

// Shuffle (HDF5's H5Z_FILTER_SHUFFLE: byte k of every element, then byte k + 1, ...), deflate
// at `gzip_level` with zlib's compress2 into at most HDF5's budget of ceil(n * 1.001F) + 12
// bytes (H5Z_DEFLATE_SIZE_ADJUST in HDF5 1.10 src/H5Zdeflate.c, from memory, with its float
// constant; when that does not suffice HDF5 skips the optional filter, and so does this,
// setting its mask bit), then the Fletcher-32 of the result appended little-endian.
FilteredChunk filter_chunk(const std::uint8_t* chunk,
                           std::size_t bytes,
                           std::size_t element_size,
                           int gzip_level);

}  // namespace wvr::detail::h5
