#pragma once
// The night file's filter pipeline (byte shuffle, deflate, Fletcher-32) applied to one chunk
// outside HDF5, so that the chunks of a dataset can be compressed on several threads and then
// stored with H5Dwrite_chunk, and undone on several threads after H5Dread_chunk. HDF5 runs its
// own filters on one thread, under its global lock. The bytes must equal what HDF5's filters
// make of the same chunk: the night file tests read the stored chunks back with H5Dread_chunk
// and compare them with HDF5's own, and read files HDF5's own filters wrote.
#include <atomic>
#include <cstddef>
#include <cstdint>
#include <stdexcept>
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

// The filters a chunk pipeline may hold for unfilter_chunk (HDF5's H5Z_FILTER_SHUFFLE,
// H5Z_FILTER_DEFLATE, H5Z_FILTER_FLETCHER32).
enum class ChunkFilter { kShuffle, kDeflate, kFletcher32 };

// Chunks read through unfilter_chunk in this process: tests check with it that the reader
// took this path.
extern std::atomic<std::size_t> filtered_chunks_read;

// A stored chunk that its filters cannot undo: a checksum that does not match, a deflate stream
// that does not inflate to the chunk's size. The message says which.
class DamagedChunk : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Undoes `pipeline` (the dataset's filters in pipeline order; bit i of `filter_mask` set: filter
// i was skipped for this chunk) on the stored bytes of one chunk, last filter first, and returns
// the chunk's `chunk_bytes` bytes. The stored Fletcher-32 (little-endian, after the bytes it
// sums) must equal hdf5_fletcher32 of those bytes. Throws DamagedChunk: the reader then leaves
// the dataset to HDF5's own read, whose verdict (and error message) on a damaged chunk stands,
// so no compatibility rule of HDF5's checksum filter needs repeating here.
std::vector<std::uint8_t> unfilter_chunk(std::vector<std::uint8_t> stored,
                                         const std::vector<ChunkFilter>& pipeline,
                                         std::uint32_t filter_mask,
                                         std::size_t chunk_bytes,
                                         std::size_t element_size);

}  // namespace wvr::detail::h5
