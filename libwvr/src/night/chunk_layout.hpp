#pragma once
// Where the elements of one chunk sit in a whole row-major array. The night file's writer and
// reader move chunks between HDF5 and memory themselves (H5Dwrite_chunk, H5Dread_chunk) so
// that the filters run on several threads; these helpers place the chunks.
#include <hdf5.h>

#include <cstddef>
#include <cstdint>

#include "night/night_file_h5.hpp"

namespace wvr::detail::h5 {

// True when values of `memory_type` are stored as the same bytes as `file_type` (integer or
// floating point of one size, byte order and sign): chunks then copy without conversion.
bool same_layout(hid_t file_type, hid_t memory_type);

// The grid of chunks over an array of `shape` cut into chunks of `chunk` (no extent 0).
class ChunkGrid {
 public:
  ChunkGrid(const Shape& shape, const Shape& chunk);
  std::size_t count() const { return count_; }
  // Element offsets of chunk `index` (row-major over the grid).
  Shape origin(std::size_t index) const;
  std::size_t chunk_elements() const { return static_cast<std::size_t>(element_count(chunk_)); }

  // Copies chunk `index` out of `array` into `chunk_out` (row-major in the chunk's shape,
  // zeroed first by the caller: HDF5 fills the part of an edge chunk outside the array with the
  // fill value, 0).
  void gather(const std::uint8_t* array,
              std::size_t index,
              std::size_t element_size,
              std::uint8_t* chunk_out) const;
  // Copies the part of chunk `index` that lies inside the array from `chunk` into `array`.
  void scatter(const std::uint8_t* chunk,
               std::size_t index,
               std::size_t element_size,
               std::uint8_t* array) const;

 private:
  // Calls copy(array_offset, chunk_offset, elements) for each row (along the last axis) of
  // chunk `index` that lies inside the array; offsets in elements.
  template <typename RowCopy>
  void for_each_row(std::size_t index, RowCopy&& copy) const;

  Shape shape_, chunk_, chunks_per_axis_;
  std::size_t count_ = 1;
};

}  // namespace wvr::detail::h5
