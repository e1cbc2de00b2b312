// Checked reading of night file objects (wvr::detail::h5::Reader).

#include <algorithm>
#include <atomic>
#include <limits>
#include <system_error>
#include <utility>

#include "core/parallel_for.hpp"
#include "night/chunk_filters.hpp"
#include "night/chunk_layout.hpp"
#include "night/night_file_h5.hpp"
#include "wvr/error.hpp"

namespace wvr::detail::h5 {

namespace {

std::string axes_text(const std::vector<Axis>& axes) {
  std::string names = "[";
  Shape sizes;
  for (std::size_t i = 0; i < axes.size(); ++i) {
    names += (i > 0 ? ", " : "") + axes[i].name;
    sizes.push_back(axes[i].size);
  }
  return names + "] = " + shape_text(sizes);
}

std::string class_name(H5T_class_t type_class) {
  switch (type_class) {
    case H5T_INTEGER:
      return "integer";
    case H5T_FLOAT:
      return "floating point";
    case H5T_STRING:
      return "string";
    case H5T_ENUM:
      return "enum";
    case H5T_COMPOUND:
      return "compound";
    default:
      return "type class " + std::to_string(static_cast<int>(type_class));
  }
}

Id open_attribute(hid_t object, const std::string& name) {
  return Id(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
}

}  // namespace

Reader::Reader(const std::filesystem::path& path, int threads)
    : source_(path.string()), threads_(threads) {
  std::error_code ec;
  const auto status = std::filesystem::status(path, ec);
  if (!std::filesystem::exists(status)) throw InvalidInput(source_ + ": no such file");
  if (std::filesystem::is_directory(status)) throw InvalidInput(source_ + ": is a directory");
  const htri_t is_hdf5 = H5Fis_hdf5(source_.c_str());
  if (is_hdf5 < 0) throw InvalidInput(with_cause(source_ + ": cannot be read as HDF5"));
  if (is_hdf5 == 0) throw InvalidInput(source_ + ": not an HDF5 file (no HDF5 signature)");
  file_ = Id(H5Fopen(source_.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), H5Fclose);
  if (file_.get() < 0) {
    throw InvalidInput(with_cause(source_ + ": damaged or truncated HDF5 file, cannot be opened"));
  }
}

void Reader::fail(const std::string& object_path, const std::string& what) const {
  throw InvalidInput(source_ + ": " + object_path + " " + what);
}

bool Reader::exists(const std::string& path) const {
  // H5Lexists fails (rather than returning false) when an intermediate group is missing,
  // so each prefix is checked in turn.
  std::size_t pos = 0;
  while (pos != std::string::npos) {
    pos = path.find('/', pos + 1);
    const std::string prefix = path.substr(0, pos);
    const htri_t found = H5Lexists(file(), prefix.c_str(), H5P_DEFAULT);
    if (found < 0) fail(prefix, with_cause("cannot be looked up"));
    if (found == 0) return false;
    if (pos != std::string::npos && !is_group(prefix)) return false;
  }
  return true;
}

bool Reader::is_group(const std::string& path) const {
  Id object(H5Oopen(file(), path.c_str(), H5P_DEFAULT), H5Oclose);
  if (object.get() < 0) fail(path, with_cause("cannot be opened"));
  const H5I_type_t type = H5Iget_type(object.get());
  if (type == H5I_GROUP) return true;
  if (type == H5I_DATASET) return false;
  fail(path, "is neither a group nor a dataset");
}

Id Reader::open_group(const std::string& path) const {
  if (!exists(path)) fail(path, "is missing");
  if (!is_group(path)) fail(path, "is a dataset, expected a group");
  Id group(H5Gopen2(file(), path.c_str(), H5P_DEFAULT), H5Gclose);
  if (group.get() < 0) fail(path, with_cause("cannot be opened"));
  return group;
}

Id Reader::open_dataset(const std::string& path) const {
  if (!exists(path)) fail(path, "is missing");
  if (is_group(path)) fail(path, "is a group, expected a dataset");
  Id dataset(H5Dopen2(file(), path.c_str(), H5P_DEFAULT), H5Dclose);
  if (dataset.get() < 0) fail(path, with_cause("cannot be opened"));
  return dataset;
}

Shape Reader::shape(hid_t dataset, const std::string& path) const {
  Id space(H5Dget_space(dataset), H5Sclose);
  if (space.get() < 0) fail(path, with_cause("has an unreadable dataspace"));
  const H5S_class_t space_class = H5Sget_simple_extent_type(space.get());
  if (space_class == H5S_SCALAR) return {};
  if (space_class != H5S_SIMPLE) fail(path, "has a null dataspace (no values)");
  const int rank = H5Sget_simple_extent_ndims(space.get());
  if (rank < 0) fail(path, with_cause("has an unreadable rank"));
  Shape dims(static_cast<std::size_t>(rank));
  if (H5Sget_simple_extent_dims(space.get(), dims.data(), nullptr) < 0) {
    fail(path, with_cause("has unreadable dimensions"));
  }
  return dims;
}

hsize_t Reader::length(const std::string& path) const {
  Id dataset = open_dataset(path);
  const Shape dims = shape(dataset.get(), path);
  if (dims.size() != 1) fail(path, "has shape " + shape_text(dims) + ", expected one axis");
  return dims[0];
}

bool Reader::has_attribute(hid_t object, const std::string& name) const {
  const htri_t found = H5Aexists(object, name.c_str());
  if (found < 0) throw InvalidInput(with_cause(source_ + ": attribute lookup failed"));
  return found > 0;
}

namespace {

// Opens a scalar (or one-element) attribute and returns it with its type class.
std::pair<Id, Id> open_single_attribute(const Reader& reader,
                                        hid_t object,
                                        const std::string& object_path,
                                        const std::string& name) {
  const std::string where = "attribute " + name;
  if (!reader.has_attribute(object, name)) reader.fail(object_path, "has no " + where);
  Id attribute = open_attribute(object, name);
  if (attribute.get() < 0) reader.fail(object_path, with_cause(where + " cannot be opened"));
  Id space(H5Aget_space(attribute.get()), H5Sclose);
  if (space.get() < 0 || H5Sget_simple_extent_npoints(space.get()) != 1) {
    reader.fail(object_path, where + " is not a single value");
  }
  Id type(H5Aget_type(attribute.get()), H5Tclose);
  if (type.get() < 0) reader.fail(object_path, with_cause(where + " has an unreadable type"));
  return {std::move(attribute), std::move(type)};
}

}  // namespace

std::string Reader::string_attribute(hid_t object,
                                     const std::string& object_path,
                                     const std::string& name) const {
  auto [attribute, type] = open_single_attribute(*this, object, object_path, name);
  if (H5Tget_class(type.get()) != H5T_STRING) {
    fail(object_path, "attribute " + name + " is " + class_name(H5Tget_class(type.get())) +
                          ", expected a string");
  }
  const htri_t variable = H5Tis_variable_str(type.get());
  if (variable < 0) fail(object_path, with_cause("attribute " + name + " has a bad string type"));
  if (variable > 0) {
    char* text = nullptr;
    if (H5Aread(attribute.get(), type.get(), &text) < 0) {
      fail(object_path, with_cause("attribute " + name + " cannot be read"));
    }
    std::string value = text != nullptr ? text : "";
    H5free_memory(text);
    return value;
  }
  const std::size_t size = H5Tget_size(type.get());
  std::string buffer(size, '\0');
  if (H5Aread(attribute.get(), type.get(), buffer.data()) < 0) {
    fail(object_path, with_cause("attribute " + name + " cannot be read"));
  }
  buffer.resize(std::min(buffer.find('\0'), buffer.size()));
  if (H5Tget_strpad(type.get()) == H5T_STR_SPACEPAD) {
    buffer.erase(buffer.find_last_not_of(' ') + 1);
  }
  return buffer;
}

std::int64_t Reader::int_attribute(hid_t object,
                                   const std::string& object_path,
                                   const std::string& name) const {
  auto [attribute, type] = open_single_attribute(*this, object, object_path, name);
  if (H5Tget_class(type.get()) != H5T_INTEGER) {
    fail(object_path, "attribute " + name + " is " + class_name(H5Tget_class(type.get())) +
                          ", expected an integer");
  }
  std::int64_t value = 0;
  if (H5Aread(attribute.get(), H5T_NATIVE_INT64, &value) < 0) {
    fail(object_path, with_cause("attribute " + name + " cannot be read"));
  }
  return value;
}

double Reader::double_attribute(hid_t object,
                                const std::string& object_path,
                                const std::string& name) const {
  auto [attribute, type] = open_single_attribute(*this, object, object_path, name);
  const H5T_class_t type_class = H5Tget_class(type.get());
  if (type_class != H5T_FLOAT && type_class != H5T_INTEGER) {
    fail(object_path,
         "attribute " + name + " is " + class_name(type_class) + ", expected a number");
  }
  double value = 0.0;
  if (H5Aread(attribute.get(), H5T_NATIVE_DOUBLE, &value) < 0) {
    fail(object_path, with_cause("attribute " + name + " cannot be read"));
  }
  return value;
}

std::vector<std::string> Reader::attribute_names(hid_t object,
                                                 const std::string& object_path) const {
  H5O_info_t info{};
  if (H5Oget_info2(object, &info, H5O_INFO_NUM_ATTRS) < 0) {
    fail(object_path, with_cause("has unreadable attributes"));
  }
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.num_attrs; ++i) {
    const ssize_t length =
        H5Aget_name_by_idx(object, ".", H5_INDEX_NAME, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
    if (length < 0) fail(object_path, with_cause("has an unreadable attribute name"));
    std::string name(static_cast<std::size_t>(length) + 1, '\0');
    H5Aget_name_by_idx(object, ".", H5_INDEX_NAME, H5_ITER_INC, i, name.data(), name.size(),
                       H5P_DEFAULT);
    name.resize(static_cast<std::size_t>(length));
    names.push_back(std::move(name));
  }
  return names;
}

std::vector<std::string> Reader::member_names(hid_t group, const std::string& group_path) const {
  H5G_info_t info{};
  if (H5Gget_info(group, &info) < 0) fail(group_path, with_cause("cannot be listed"));
  H5_index_t index = H5_INDEX_NAME;
  Id gcpl(H5Gget_create_plist(group), H5Pclose);
  unsigned order_flags = 0;
  if (gcpl.get() >= 0 && H5Pget_link_creation_order(gcpl.get(), &order_flags) >= 0 &&
      (order_flags & H5P_CRT_ORDER_INDEXED) != 0) {
    index = H5_INDEX_CRT_ORDER;
  }
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.nlinks; ++i) {
    const ssize_t length =
        H5Lget_name_by_idx(group, ".", index, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
    if (length < 0) fail(group_path, with_cause("has an unreadable member name"));
    std::string name(static_cast<std::size_t>(length) + 1, '\0');
    H5Lget_name_by_idx(group, ".", index, H5_ITER_INC, i, name.data(), name.size(), H5P_DEFAULT);
    name.resize(static_cast<std::size_t>(length));
    names.push_back(std::move(name));
  }
  return names;
}

void Reader::expect_units(hid_t dataset, const std::string& path, const std::string& units) const {
  const std::string actual = string_attribute(dataset, path, "units");
  if (actual != units) fail(path, "has units \"" + actual + "\", expected \"" + units + "\"");
}

void Reader::expect_shape(hid_t dataset,
                          const std::string& path,
                          const std::vector<Axis>& axes) const {
  const Shape actual = shape(dataset, path);
  bool same = actual.size() == axes.size();
  for (std::size_t i = 0; same && i < axes.size(); ++i) same = actual[i] == axes[i].size;
  if (!same) fail(path, "has shape " + shape_text(actual) + ", expected " + axes_text(axes));
}

namespace {

// The dataset's filters as ChunkFilters, in pipeline order; false when it holds any other filter
// (or a shuffle for another element size), which only HDF5's own read can undo.
bool undoable_pipeline(hid_t dcpl, std::size_t element_size, std::vector<ChunkFilter>& pipeline) {
  const int count = H5Pget_nfilters(dcpl);
  if (count < 0 || count > 32) return false;
  for (int i = 0; i < count; ++i) {
    unsigned flags = 0, config = 0;
    std::size_t values = 1;
    unsigned value[1] = {0};
    const H5Z_filter_t id =
        H5Pget_filter2(dcpl, static_cast<unsigned>(i), &flags, &values, value, 0, nullptr, &config);
    if (id == H5Z_FILTER_SHUFFLE && values >= 1 && value[0] == element_size) {
      pipeline.push_back(ChunkFilter::kShuffle);
    } else if (id == H5Z_FILTER_DEFLATE) {
      pipeline.push_back(ChunkFilter::kDeflate);
    } else if (id == H5Z_FILTER_FLETCHER32) {
      pipeline.push_back(ChunkFilter::kFletcher32);
    } else {
      return false;
    }
  }
  return true;
}

}  // namespace

bool Reader::read_chunks_on_threads(hid_t dataset,
                                    const std::string& path,
                                    hid_t memory_type,
                                    void* buffer) const {
  Id file_type(H5Dget_type(dataset), H5Tclose);
  if (file_type.get() < 0 || !same_layout(file_type.get(), memory_type)) return false;
  Id dcpl(H5Dget_create_plist(dataset), H5Pclose);
  if (dcpl.get() < 0 || H5Pget_layout(dcpl.get()) != H5D_CHUNKED) return false;
  const std::size_t element_size = H5Tget_size(file_type.get());
  std::vector<ChunkFilter> pipeline;
  if (!undoable_pipeline(dcpl.get(), element_size, pipeline)) return false;
  const Shape shape = this->shape(dataset, path);
  const int rank = static_cast<int>(shape.size());
  Shape chunk(shape.size());
  if (rank == 0 || H5Pget_chunk(dcpl.get(), rank, chunk.data()) != rank) return false;
  if (std::any_of(chunk.begin(), chunk.end(), [](hsize_t n) { return n == 0; })) return false;
  const ChunkGrid grid(shape, chunk);
  if (grid.count() < 2) return false;  // nothing to spread over threads
  // A chunk never written holds the fill value, which only HDF5's own read supplies.
  Id space(H5Dget_space(dataset), H5Sclose);
  hsize_t stored_chunks = 0;
  if (space.get() < 0 || H5Dget_num_chunks(dataset, space.get(), &stored_chunks) < 0 ||
      stored_chunks != grid.count()) {
    return false;
  }
  const std::size_t chunk_bytes = grid.chunk_elements() * element_size;
  auto* values = static_cast<std::uint8_t*>(buffer);
  // Batches bound the stored bytes held at once (about 64 MiB, more where chunks compress).
  const std::size_t workers = worker_count(threads_, grid.count());
  const std::size_t batch = std::max(workers, (std::size_t{64} << 20) / chunk_bytes);
  std::vector<std::vector<std::uint8_t>> stored(std::min(batch, grid.count()));
  std::vector<std::uint32_t> masks(stored.size());
  for (std::size_t first = 0; first < grid.count(); first += batch) {
    const std::size_t n = std::min(batch, grid.count() - first);
    for (std::size_t i = 0; i < n; ++i) {
      const Shape origin = grid.origin(first + i);
      hsize_t bytes = 0;
      if (H5Dget_chunk_storage_size(dataset, origin.data(), &bytes) < 0) return false;
      stored[i].resize(bytes);
      if (H5Dread_chunk(dataset, H5P_DEFAULT, origin.data(), &masks[i], stored[i].data()) < 0) {
        return false;
      }
    }
    std::atomic<bool> undone{true};
    parallel_blocks(n, workers, [&](std::size_t begin, std::size_t end, std::size_t) {
      for (std::size_t i = begin; i < end && undone; ++i) {
        try {
          const std::vector<std::uint8_t> chunk_values =
              unfilter_chunk(std::move(stored[i]), pipeline, masks[i], chunk_bytes, element_size);
          grid.scatter(chunk_values.data(), first + i, element_size, values);
        } catch (const DamagedChunk&) {
          undone = false;
        }
      }
    });
    if (!undone) return false;
  }
  return true;
}

void Reader::refuse_chunks_shorter_than_checksum(hid_t dataset, const std::string& path) const {
  Id dcpl(H5Dget_create_plist(dataset), H5Pclose);
  if (dcpl.get() < 0 || H5Pget_layout(dcpl.get()) != H5D_CHUNKED) return;
  bool checksummed = false;
  const int filters = H5Pget_nfilters(dcpl.get());
  for (int i = 0; i < filters; ++i) {
    unsigned flags = 0, config = 0;
    std::size_t values = 0;
    checksummed |= H5Pget_filter2(dcpl.get(), static_cast<unsigned>(i), &flags, &values, nullptr, 0,
                                  nullptr, &config) == H5Z_FILTER_FLETCHER32;
  }
  if (!checksummed) return;
  const Shape shape = this->shape(dataset, path);
  const int rank = static_cast<int>(shape.size());
  Shape chunk(shape.size());
  if (rank == 0 || H5Pget_chunk(dcpl.get(), rank, chunk.data()) != rank) return;
  if (std::any_of(chunk.begin(), chunk.end(), [](hsize_t n) { return n == 0; })) return;
  const ChunkGrid grid(shape, chunk);
  for (std::size_t i = 0; i < grid.count(); ++i) {
    const Shape origin = grid.origin(i);
    unsigned mask = 0;
    haddr_t address = HADDR_UNDEF;
    hsize_t bytes = 0;
    // A chunk never written has no address (it reads as the fill value).
    if (H5Dget_chunk_info_by_coord(dataset, origin.data(), &mask, &address, &bytes) < 0 ||
        address == HADDR_UNDEF)
      continue;
    if (bytes < 4) {
      fail(path, "is damaged: a stored chunk holds " + std::to_string(bytes) +
                     " of the at least 4 bytes its Fletcher-32 checksum needs");
    }
  }
}

void Reader::read_raw(hid_t dataset,
                      const std::string& path,
                      hid_t memory_type,
                      void* buffer) const {
  if (read_chunks_on_threads(dataset, path, memory_type, buffer)) return;
  refuse_chunks_shorter_than_checksum(dataset, path);
  if (H5Dread(dataset, memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, buffer) < 0) {
    fail(path, with_cause("cannot be read (damaged or truncated file?)"));
  }
}

template <typename T>
std::vector<T> Reader::read_numeric(const std::string& path,
                                    const std::vector<Axis>& axes,
                                    const std::string& units,
                                    H5T_class_t type_class,
                                    hid_t memory_type) const {
  Id dataset = open_dataset(path);
  expect_shape(dataset.get(), path, axes);
  Id type(H5Dget_type(dataset.get()), H5Tclose);
  if (type.get() < 0) fail(path, with_cause("has an unreadable type"));
  const H5T_class_t actual = H5Tget_class(type.get());
  if (actual != type_class) {
    fail(path, "has " + class_name(actual) + " values, expected " + class_name(type_class));
  }
  expect_units(dataset.get(), path, units);
  std::size_t count = 1;
  for (const Axis& axis : axes) count *= axis.size;
  std::vector<T> values(count);
  if (count > 0) read_raw(dataset.get(), path, memory_type, values.data());
  return values;
}

std::vector<double> Reader::read_doubles(const std::string& path,
                                         const std::vector<Axis>& axes,
                                         const std::string& units) const {
  return read_numeric<double>(path, axes, units, H5T_FLOAT, H5T_NATIVE_DOUBLE);
}

std::vector<std::int32_t> Reader::read_int32s(const std::string& path,
                                              const std::vector<Axis>& axes,
                                              const std::string& units) const {
  // Read at 64 bits: HDF5 clamps out-of-range integers silently when narrowing.
  const auto wide = read_numeric<std::int64_t>(path, axes, units, H5T_INTEGER, H5T_NATIVE_INT64);
  std::vector<std::int32_t> values(wide.size());
  for (std::size_t i = 0; i < wide.size(); ++i) {
    if (wide[i] < std::numeric_limits<std::int32_t>::min() ||
        wide[i] > std::numeric_limits<std::int32_t>::max()) {
      fail(path, "value " + std::to_string(wide[i]) + " at flat index " + std::to_string(i) +
                     " does not fit a 32-bit integer");
    }
    values[i] = static_cast<std::int32_t>(wide[i]);
  }
  return values;
}

std::vector<std::uint8_t> Reader::read_uint8s(const std::string& path,
                                              const std::vector<Axis>& axes,
                                              const std::string& units) const {
  // Read at 16 bits so that values such as -1 or 256 are seen, not clamped into range.
  const auto wide = read_numeric<std::int16_t>(path, axes, units, H5T_INTEGER, H5T_NATIVE_INT16);
  std::vector<std::uint8_t> values(wide.size());
  for (std::size_t i = 0; i < wide.size(); ++i) {
    if (wide[i] < 0 || wide[i] > 255) {
      fail(path, "value " + std::to_string(wide[i]) + " at flat index " + std::to_string(i) +
                     " does not fit an unsigned 8-bit integer");
    }
    values[i] = static_cast<std::uint8_t>(wide[i]);
  }
  return values;
}

std::vector<std::string> Reader::read_string_values(hid_t dataset,
                                                    const std::string& path,
                                                    hsize_t count) const {
  Id type(H5Dget_type(dataset), H5Tclose);
  if (type.get() < 0) fail(path, with_cause("has an unreadable type"));
  const H5T_class_t type_class = H5Tget_class(type.get());
  if (type_class != H5T_STRING)
    fail(path, "has " + class_name(type_class) + " values, expected strings");
  std::vector<std::string> values;
  values.reserve(count);
  if (count == 0) return values;
  const htri_t variable = H5Tis_variable_str(type.get());
  if (variable < 0) fail(path, with_cause("has a bad string type"));
  if (variable > 0) {
    std::vector<char*> pointers(count, nullptr);
    read_raw(dataset, path, type.get(), pointers.data());
    for (char* text : pointers) values.emplace_back(text != nullptr ? text : "");
    Id space(H5Dget_space(dataset), H5Sclose);
    H5Dvlen_reclaim(type.get(), space.get(), H5P_DEFAULT, pointers.data());
    return values;
  }
  const std::size_t size = H5Tget_size(type.get());
  std::string buffer(size * count, '\0');
  read_raw(dataset, path, type.get(), buffer.data());
  const bool space_padded = H5Tget_strpad(type.get()) == H5T_STR_SPACEPAD;
  for (hsize_t i = 0; i < count; ++i) {
    std::string value = buffer.substr(i * size, size);
    value.resize(std::min(value.find('\0'), value.size()));
    if (space_padded) value.erase(value.find_last_not_of(' ') + 1);
    values.push_back(std::move(value));
  }
  return values;
}

std::vector<std::string> Reader::read_strings(const std::string& path,
                                              const std::vector<Axis>& axes,
                                              const std::string& units) const {
  Id dataset = open_dataset(path);
  expect_shape(dataset.get(), path, axes);
  expect_units(dataset.get(), path, units);
  hsize_t count = 1;
  for (const Axis& axis : axes) count *= axis.size;
  return read_string_values(dataset.get(), path, count);
}

}  // namespace wvr::detail::h5
