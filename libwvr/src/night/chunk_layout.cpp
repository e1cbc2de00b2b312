#include "night/chunk_layout.hpp"

#include <algorithm>
#include <cstring>

namespace wvr::detail::h5 {

bool same_layout(hid_t file_type, hid_t memory_type) {
  const H5T_class_t type_class = H5Tget_class(file_type);
  if (type_class != H5Tget_class(memory_type) || H5Tget_size(file_type) != H5Tget_size(memory_type))
    return false;
  if (type_class == H5T_FLOAT) return H5Tget_order(file_type) == H5Tget_order(memory_type);
  if (type_class == H5T_INTEGER)
    return H5Tget_order(file_type) == H5Tget_order(memory_type) &&
           H5Tget_sign(file_type) == H5Tget_sign(memory_type);
  return false;
}

ChunkGrid::ChunkGrid(const Shape& shape, const Shape& chunk)
    : shape_(shape), chunk_(chunk), chunks_per_axis_(shape.size()) {
  for (std::size_t d = 0; d < shape.size(); ++d) {
    chunks_per_axis_[d] = (shape[d] + chunk[d] - 1) / chunk[d];
    count_ *= chunks_per_axis_[d];
  }
}

Shape ChunkGrid::origin(std::size_t index) const {
  Shape origin(shape_.size());
  for (std::size_t d = shape_.size(); d-- > 0;) {
    origin[d] = (index % chunks_per_axis_[d]) * chunk_[d];
    index /= chunks_per_axis_[d];
  }
  return origin;
}

template <typename RowCopy>
void ChunkGrid::for_each_row(std::size_t index, RowCopy&& copy) const {
  const Shape origin = this->origin(index);
  const std::size_t rank = shape_.size();
  const hsize_t row_elements = std::min(chunk_[rank - 1], shape_[rank - 1] - origin[rank - 1]);
  Shape position(rank, 0);  // within the chunk; the last axis is copied as a row
  while (true) {
    bool inside = true;
    std::size_t array_offset = 0, chunk_offset = 0;
    for (std::size_t d = 0; d < rank; ++d) {
      inside = inside && origin[d] + position[d] < shape_[d];
      array_offset = array_offset * shape_[d] + origin[d] + position[d];
      chunk_offset = chunk_offset * chunk_[d] + position[d];
    }
    if (inside) copy(array_offset, chunk_offset, static_cast<std::size_t>(row_elements));
    std::size_t d = rank - 1;  // next row: advance the axes before the last
    while (d > 0) {
      if (++position[d - 1] < chunk_[d - 1]) break;
      position[d - 1] = 0;
      --d;
    }
    if (d == 0) return;
  }
}

void ChunkGrid::gather(const std::uint8_t* array,
                       std::size_t index,
                       std::size_t element_size,
                       std::uint8_t* chunk_out) const {
  for_each_row(index, [&](std::size_t array_offset, std::size_t chunk_offset, std::size_t n) {
    std::memcpy(chunk_out + chunk_offset * element_size, array + array_offset * element_size,
                n * element_size);
  });
}

void ChunkGrid::scatter(const std::uint8_t* chunk,
                        std::size_t index,
                        std::size_t element_size,
                        std::uint8_t* array) const {
  for_each_row(index, [&](std::size_t array_offset, std::size_t chunk_offset, std::size_t n) {
    std::memcpy(array + array_offset * element_size, chunk + chunk_offset * element_size,
                n * element_size);
  });
}

}  // namespace wvr::detail::h5
