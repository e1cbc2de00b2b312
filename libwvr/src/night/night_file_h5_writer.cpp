// Checked writing of night file objects (wvr::detail::h5::Writer).

#include <algorithm>
#include <utility>

#include "night/night_file_h5.hpp"
#include "wvr/error.hpp"

namespace wvr::detail::h5 {

Writer::Writer(const std::filesystem::path& path, Mode mode, std::string source, int gzip_level)
    : source_(std::move(source)), gzip_level_(gzip_level) {
  // Strong close: closing the file closes (and flushes) every object still open in it, so a
  // successful close() means the whole file has been written.
  Id fapl(H5Pcreate(H5P_FILE_ACCESS), H5Pclose);
  H5Pset_fclose_degree(fapl.get(), H5F_CLOSE_STRONG);
  // HDF5 1.8 file format (readable by HDF5 1.8 and later): objects get version 2 headers
  // ("OHDR" signature), which carry a checksum (HDF5 File Format Specification 2.0, from
  // memory), so a damaged header is reported as an error instead of being parsed.
  H5Pset_libver_bounds(fapl.get(), H5F_LIBVER_V18, H5F_LIBVER_V18);
  if (mode == Mode::kCreate) {
    file_ = Id(H5Fcreate(path.c_str(), H5F_ACC_EXCL, H5P_DEFAULT, fapl.get()), H5Fclose);
  } else {
    file_ = Id(H5Fopen(path.c_str(), H5F_ACC_RDWR, fapl.get()), H5Fclose);
  }
  if (file_.get() < 0) {
    throw Error(with_cause(source_ + ": cannot create " + path.string() + " for writing"));
  }
}

void Writer::fail(const std::string& object_path, const std::string& what) const {
  throw Error(with_cause(source_ + ": " + object_path + " " + what));
}

Id Writer::create_group(hid_t parent, const std::string& path, bool track_order) const {
  Id gcpl(H5Pcreate(H5P_GROUP_CREATE), H5Pclose);
  if (track_order &&
      H5Pset_link_creation_order(gcpl.get(), H5P_CRT_ORDER_TRACKED | H5P_CRT_ORDER_INDEXED) < 0) {
    fail(path, "cannot be set up to keep creation order");
  }
  Id group(H5Gcreate2(parent, path.c_str(), H5P_DEFAULT, gcpl.get(), H5P_DEFAULT), H5Gclose);
  if (group.get() < 0) fail(path, "cannot be created");
  return group;
}

Id Writer::open_group(const std::string& path) const {
  Id group(H5Gopen2(file(), path.c_str(), H5P_DEFAULT), H5Gclose);
  if (group.get() < 0) fail(path, "cannot be opened");
  return group;
}

void Writer::delete_link(const std::string& path) const {
  if (H5Ldelete(file(), path.c_str(), H5P_DEFAULT) < 0) fail(path, "cannot be deleted");
}

namespace {

Id scalar_space() { return Id(H5Screate(H5S_SCALAR), H5Sclose); }

// Fixed-length, NUL-padded UTF-8 strings of `size` bytes (numpy's "S" layout). Variable-
// length strings would live in HDF5's global heap, which carries no checksum: HDF5 1.10.8
// crashed (SIGSEGV in H5HG_read) on damaged heaps when we fed it randomly corrupted night
// files, and the reader must survive damaged files.
Id fixed_string_type(std::size_t size) {
  Id type(H5Tcopy(H5T_C_S1), H5Tclose);
  H5Tset_size(type.get(), std::max<std::size_t>(size, 1));
  H5Tset_strpad(type.get(), H5T_STR_NULLPAD);
  H5Tset_cset(type.get(), H5T_CSET_UTF8);
  return type;
}

}  // namespace

void Writer::string_attribute(hid_t object,
                              const std::string& object_path,
                              const std::string& name,
                              const std::string& value) const {
  Id type = fixed_string_type(value.size());
  Id space = scalar_space();
  Id attribute(H5Acreate2(object, name.c_str(), type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT),
               H5Aclose);
  std::string buffer = value;
  buffer.resize(std::max<std::size_t>(value.size(), 1), '\0');
  if (attribute.get() < 0 || H5Awrite(attribute.get(), type.get(), buffer.data()) < 0) {
    fail(object_path, "attribute " + name + " cannot be written");
  }
}

void Writer::int_attribute(hid_t object,
                           const std::string& object_path,
                           const std::string& name,
                           std::int32_t value) const {
  Id space = scalar_space();
  Id attribute(
      H5Acreate2(object, name.c_str(), H5T_STD_I32LE, space.get(), H5P_DEFAULT, H5P_DEFAULT),
      H5Aclose);
  if (attribute.get() < 0 || H5Awrite(attribute.get(), H5T_NATIVE_INT32, &value) < 0) {
    fail(object_path, "attribute " + name + " cannot be written");
  }
}

void Writer::double_attribute(hid_t object,
                              const std::string& object_path,
                              const std::string& name,
                              double value) const {
  Id space = scalar_space();
  Id attribute(
      H5Acreate2(object, name.c_str(), H5T_IEEE_F64LE, space.get(), H5P_DEFAULT, H5P_DEFAULT),
      H5Aclose);
  if (attribute.get() < 0 || H5Awrite(attribute.get(), H5T_NATIVE_DOUBLE, &value) < 0) {
    fail(object_path, "attribute " + name + " cannot be written");
  }
}

namespace {

Id simple_space(const Shape& shape) {
  if (shape.empty()) return scalar_space();
  return Id(H5Screate_simple(static_cast<int>(shape.size()), shape.data(), nullptr), H5Sclose);
}

}  // namespace

Id Writer::write_array(const std::string& path,
                       hid_t file_type,
                       hid_t memory_type,
                       const void* data,
                       const Shape& shape,
                       const Shape& chunk,
                       const std::string& units) const {
  Id space = simple_space(shape);
  Id dcpl(H5Pcreate(H5P_DATASET_CREATE), H5Pclose);
  if (!chunk.empty()) {
    if (H5Pset_chunk(dcpl.get(), static_cast<int>(chunk.size()), chunk.data()) < 0) {
      fail(path, "cannot be set up for chunked storage");
    }
    if (gzip_level_ > 0 && (H5Pset_shuffle(dcpl.get()) < 0 ||
                            H5Pset_deflate(dcpl.get(), static_cast<unsigned>(gzip_level_)) < 0)) {
      fail(path, "cannot be set up for gzip compression");
    }
  }
  Id dataset(H5Dcreate2(file(), path.c_str(), file_type, space.get(), H5P_DEFAULT, dcpl.get(),
                        H5P_DEFAULT),
             H5Dclose);
  if (dataset.get() < 0) fail(path, "cannot be created");
  if (element_count(shape) > 0 &&
      H5Dwrite(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) < 0) {
    fail(path, "cannot be written");
  }
  string_attribute(dataset.get(), path, "units", units);
  return dataset;
}

Id Writer::write_strings(const std::string& path,
                         const std::vector<std::string>& values,
                         const std::string& units) const {
  std::size_t size = 1;
  for (const std::string& value : values) size = std::max(size, value.size());
  Id type = fixed_string_type(size);
  Id space = simple_space({values.size()});
  Id dataset(H5Dcreate2(file(), path.c_str(), type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT,
                        H5P_DEFAULT),
             H5Dclose);
  if (dataset.get() < 0) fail(path, "cannot be created");
  std::string buffer(size * values.size(), '\0');
  for (std::size_t i = 0; i < values.size(); ++i) values[i].copy(buffer.data() + i * size, size);
  if (!values.empty() &&
      H5Dwrite(dataset.get(), type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, buffer.data()) < 0) {
    fail(path, "cannot be written");
  }
  string_attribute(dataset.get(), path, "units", units);
  return dataset;
}

void Writer::close() {
  if (!file_.reset()) fail("/", "cannot be flushed and closed (disk full?)");
}

}  // namespace wvr::detail::h5
