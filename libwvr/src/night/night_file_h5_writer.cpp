// Checked writing of night file objects (wvr::detail::h5::Writer).

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <memory>
#include <utility>

#include "core/parallel_for.hpp"
#include "night/chunk_filters.hpp"
#include "night/chunk_layout.hpp"
#include "night/night_file_h5.hpp"
#include "wvr/error.hpp"

namespace wvr::detail::h5 {

namespace {

// Memory from std::malloc, released with std::free (what HDF5's image callbacks hand around).
struct FreeDeleter {
  void operator()(void* pointer) const { std::free(pointer); }
};
using MallocBytes = std::unique_ptr<char, FreeDeleter>;

// The whole file in one read, into memory HDF5's core driver can take over and grow.
MallocBytes file_bytes(const std::filesystem::path& path,
                       const std::string& source,
                       std::size_t& size) {
  std::ifstream in(path, std::ios::binary | std::ios::ate);
  const std::streamoff length = in ? static_cast<std::streamoff>(in.tellg()) : -1;
  size = length > 0 ? static_cast<std::size_t>(length) : 0;
  MallocBytes bytes(static_cast<char*>(std::malloc(std::max<std::size_t>(size, 1))));
  if (bytes == nullptr) throw Error(source + ": no memory for a copy of " + path.string());
  if (size > 0 && in.seekg(0)) in.read(bytes.get(), static_cast<std::streamsize>(size));
  if (!in || length < 0) {
    throw Error(source + ": cannot read " + path.string() + ": " + std::strerror(errno));
  }
  return bytes;
}

}  // namespace

// The core driver's memory, allocated through HDF5's file image callbacks (HDF5 1.10 "File
// Image Operations"): when HDF5 closes the file it hands the buffer to image_free, which keeps
// it. The kept bytes are the file exactly as HDF5 would have written it at close.
// A file started from an existing one shares that file's bytes: every property list holding
// the image, and then the core driver, get the same buffer instead of a copy each (the
// pattern of HDF5's own H5LTopen_file_image with H5LT_FILE_IMAGE_DONT_COPY, HDF5 1.10 high-level
// library, from memory). Two extra copies of a night with every baseline (170 MB each) were the
// peak of a whole run's memory. The driver writes into and grows the buffer; property lists never
// free it.
struct Writer::Image {
  bool sharing = false;    // started from an existing file's bytes
  void* shared = nullptr;  // those bytes, wherever the driver has moved them
  void* kept = nullptr;    // the closed file's bytes
  ~Image() {
    if (shared != kept) std::free(shared);
    std::free(kept);
  }

  static bool hands_out_shared(H5FD_file_image_op_t op) {
    return op == H5FD_FILE_IMAGE_OP_PROPERTY_LIST_SET ||
           op == H5FD_FILE_IMAGE_OP_PROPERTY_LIST_COPY ||
           op == H5FD_FILE_IMAGE_OP_PROPERTY_LIST_GET || op == H5FD_FILE_IMAGE_OP_FILE_OPEN;
  }
  static void* allocate(std::size_t size, H5FD_file_image_op_t op, void* user) {
    auto* image = static_cast<Image*>(user);
    if (image->sharing && image->shared != nullptr && hands_out_shared(op)) return image->shared;
    return std::malloc(size);
  }
  static void* copy(
      void* destination, const void* source, std::size_t size, H5FD_file_image_op_t, void* user) {
    auto* image = static_cast<Image*>(user);
    // The shared buffer already holds the image (a property list's view may point where the
    // buffer was before the driver grew it).
    if (image->sharing && destination == image->shared) return destination;
    return std::memcpy(destination, source, size);
  }
  static void* resize(void* pointer, std::size_t size, H5FD_file_image_op_t, void* user) {
    auto* image = static_cast<Image*>(user);
    void* resized = std::realloc(pointer, size);
    if (resized != nullptr && pointer == image->shared) image->shared = resized;
    return resized;
  }
  static herr_t release(void* pointer, H5FD_file_image_op_t op, void* user) {
    auto* image = static_cast<Image*>(user);
    if (op == H5FD_FILE_IMAGE_OP_FILE_CLOSE && image->kept == nullptr) {
      image->kept = pointer;
      if (pointer == image->shared) image->shared = nullptr;
      return 0;
    }
    // A property list's view of the shared buffer (possibly of where it was before it grew).
    if (image->sharing && op == H5FD_FILE_IMAGE_OP_PROPERTY_LIST_CLOSE) return 0;
    if (pointer == image->shared) image->shared = nullptr;
    std::free(pointer);
    return 0;
  }
  static void* share(void* user) { return user; }
  static herr_t unshare(void*) { return 0; }
};

Writer::Writer(const std::filesystem::path& start_from,
               std::string source,
               int gzip_level,
               int threads)
    : source_(std::move(source)),
      gzip_level_(gzip_level),
      threads_(threads),
      image_(std::make_unique<Image>()) {
  // Strong close: closing the file closes every object still open in it.
  Id fapl(H5Pcreate(H5P_FILE_ACCESS), H5Pclose);
  H5Pset_fclose_degree(fapl.get(), H5F_CLOSE_STRONG);
  // HDF5 1.8 file format (readable by HDF5 1.8 and later): objects get version 2 headers
  // ("OHDR" signature), which carry a checksum (HDF5 File Format Specification 2.0, from
  // memory), so a damaged header is reported as an error instead of being parsed.
  H5Pset_libver_bounds(fapl.get(), H5F_LIBVER_V18, H5F_LIBVER_V18);
  // In memory, grown 1 MiB at a time, never written back by HDF5.
  H5Pset_fapl_core(fapl.get(), 1 << 20, false);
  H5FD_file_image_callbacks_t callbacks{&Image::allocate, &Image::copy,  &Image::resize,
                                        &Image::release,  &Image::share, &Image::unshare,
                                        image_.get()};
  if (H5Pset_file_image_callbacks(fapl.get(), &callbacks) < 0) {
    throw Error(with_cause(source_ + ": cannot be set up for writing in memory"));
  }
  // The in-memory file's name only identifies it inside HDF5; no file of that name is made.
  static std::atomic<unsigned> counter{0};
  const std::string name =
      "wvr-in-memory-" + std::to_string(::getpid()) + "-" + std::to_string(counter++) + ".h5";
  if (start_from.empty()) {
    // The root group without a modification time, as every group and dataset below it
    // (create_group, checked_layout): the same night gives the same bytes whenever written.
    Id fcpl(H5Pcreate(H5P_FILE_CREATE), H5Pclose);
    if (H5Pset_obj_track_times(fcpl.get(), false) < 0) {
      throw Error(with_cause(source_ + ": cannot be set up without modification times"));
    }
    file_ = Id(H5Fcreate(name.c_str(), H5F_ACC_TRUNC, fcpl.get(), fapl.get()), H5Fclose);
  } else {
    std::size_t size = 0;
    image_->shared = file_bytes(start_from, source_, size).release();
    image_->sharing = true;
    if (H5Pset_file_image(fapl.get(), image_->shared, size) < 0) {
      throw Error(with_cause(source_ + ": cannot take a copy of " + start_from.string()));
    }
    file_ = Id(H5Fopen(name.c_str(), H5F_ACC_RDWR, fapl.get()), H5Fclose);
  }
  if (file_.get() < 0) throw Error(with_cause(source_ + ": cannot be set up for writing"));
}

Writer::~Writer() = default;

void Writer::fail(const std::string& object_path, const std::string& what) const {
  throw Error(with_cause(source_ + ": " + object_path + " " + what));
}

Id Writer::create_group(hid_t parent, const std::string& path, bool track_order) const {
  Id gcpl(H5Pcreate(H5P_GROUP_CREATE), H5Pclose);
  // Without modification times in the object headers, the same night gives the same bytes
  // whenever it is written (HDF5 stores them by default, to the second).
  if (H5Pset_obj_track_times(gcpl.get(), false) < 0) fail(path, "cannot be set up without times");
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

Id Writer::checked_layout(const std::string& path,
                          const Shape& shape,
                          const Shape& chunk,
                          bool compress) const {
  Id dcpl(H5Pcreate(H5P_DATASET_CREATE), H5Pclose);
  // No modification times, as for groups (create_group): equal nights give equal bytes.
  if (H5Pset_obj_track_times(dcpl.get(), false) < 0) fail(path, "cannot be set up without times");
  // Filters need chunked storage, which needs a simple dataspace with at least one element;
  // scalars and empty datasets stay contiguous (no values to protect in the latter).
  if (shape.empty() || element_count(shape) == 0) return dcpl;
  if (H5Pset_chunk(dcpl.get(), static_cast<int>(chunk.size()), chunk.data()) < 0) {
    fail(path, "cannot be set up for chunked storage");
  }
  if (compress && gzip_level_ > 0 &&
      (H5Pset_shuffle(dcpl.get()) < 0 ||
       H5Pset_deflate(dcpl.get(), static_cast<unsigned>(gzip_level_)) < 0)) {
    fail(path, "cannot be set up for gzip compression");
  }
  // Last in the pipeline: the checksum covers the bytes as stored, verified on every read.
  if (H5Pset_fletcher32(dcpl.get()) < 0) fail(path, "cannot be set up with a checksum");
  return dcpl;
}

Id Writer::write_array(const std::string& path,
                       hid_t file_type,
                       hid_t memory_type,
                       const void* data,
                       const Shape& shape,
                       const Shape& chunk,
                       const std::string& units) const {
  Id space = simple_space(shape);
  Id dcpl = checked_layout(path, shape, chunk.empty() ? shape : chunk, !chunk.empty());
  Id dataset(H5Dcreate2(file(), path.c_str(), file_type, space.get(), H5P_DEFAULT, dcpl.get(),
                        H5P_DEFAULT),
             H5Dclose);
  if (dataset.get() < 0) fail(path, "cannot be created");
  const bool filtered_here =
      !chunk.empty() && gzip_level_ > 0 && element_count(shape) > element_count(chunk) &&
      write_filtered_chunks(path, dataset.get(), file_type, memory_type, data, shape, chunk);
  if (!filtered_here && element_count(shape) > 0 &&
      H5Dwrite(dataset.get(), memory_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) < 0) {
    fail(path, "cannot be written");
  }
  string_attribute(dataset.get(), path, "units", units);
  return dataset;
}

bool Writer::write_filtered_chunks(const std::string& path,
                                   hid_t dataset,
                                   hid_t file_type,
                                   hid_t memory_type,
                                   const void* data,
                                   const Shape& shape,
                                   const Shape& chunk) const {
  if (!same_layout(file_type, memory_type)) return false;
  const std::size_t element_size = H5Tget_size(file_type);
  const ChunkGrid grid(shape, chunk);
  const std::size_t chunk_count = grid.count();
  const std::size_t chunk_bytes = grid.chunk_elements() * element_size;
  const auto* bytes = static_cast<const std::uint8_t*>(data);
  // Batches bound the bytes held at once (about 64 MiB), whatever the core count.
  const std::size_t workers = worker_count(threads_, chunk_count);
  const std::size_t batch = std::max(workers, (std::size_t{64} << 20) / chunk_bytes);
  std::vector<FilteredChunk> filtered(std::min(batch, chunk_count));
  for (std::size_t first = 0; first < chunk_count; first += batch) {
    const std::size_t n = std::min(batch, chunk_count - first);
    parallel_blocks(n, workers, [&](std::size_t begin, std::size_t end, std::size_t) {
      std::vector<std::uint8_t> buffer(chunk_bytes);
      for (std::size_t i = begin; i < end; ++i) {
        std::fill(buffer.begin(), buffer.end(), 0);
        grid.gather(bytes, first + i, element_size, buffer.data());
        filtered[i] = filter_chunk(buffer.data(), chunk_bytes, element_size, gzip_level_);
      }
    });
    for (std::size_t i = 0; i < n; ++i) {
      const Shape origin = grid.origin(first + i);
      if (H5Dwrite_chunk(dataset, H5P_DEFAULT, filtered[i].filter_mask, origin.data(),
                         filtered[i].bytes.size(), filtered[i].bytes.data()) < 0) {
        fail(path, "chunk " + std::to_string(first + i) + " cannot be written");
      }
      ++filtered_chunks_written;
    }
  }
  return true;
}

Id Writer::write_strings(const std::string& path,
                         const std::vector<std::string>& values,
                         const std::string& units) const {
  std::size_t size = 1;
  for (const std::string& value : values) size = std::max(size, value.size());
  Id type = fixed_string_type(size);
  Id space = simple_space({values.size()});
  Id dcpl = checked_layout(path, {values.size()}, {values.size()}, false);
  Id dataset(H5Dcreate2(file(), path.c_str(), type.get(), space.get(), H5P_DEFAULT, dcpl.get(),
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

void Writer::close_into(const std::filesystem::path& file) {
  if (H5Fflush(file_.get(), H5F_SCOPE_GLOBAL) < 0) fail("/", "cannot be flushed");
  // The size of the file's image (its end of allocated space), not of the in-memory buffer,
  // which grows in whole increments. The bytes themselves are taken after the close, which
  // clears the superblock's open-for-writing flags.
  const ssize_t image_size = H5Fget_file_image(file_.get(), nullptr, 0);
  if (image_size <= 0) fail("/", "has no known size");
  const auto size = static_cast<std::size_t>(image_size);
  if (!file_.reset() || image_->kept == nullptr) fail("/", "cannot be closed");
  const char* bytes = static_cast<const char*>(image_->kept);
  const int fd = ::open(file.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
  if (fd < 0) {
    throw Error(source_ + ": cannot create " + file.string() + ": " + std::strerror(errno));
  }
  std::size_t done = 0;
  while (done < size) {
    const ssize_t n = ::write(fd, bytes + done, size - done);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      const int error = n < 0 ? errno : ENOSPC;
      ::close(fd);
      // strerror(ENOSPC) is "No space left on device"; said in our words, lower case.
      throw Error(source_ + ": cannot be written: " +
                  (error == ENOSPC ? std::string("no space left on device")
                                   : std::string(std::strerror(error))));
    }
    done += static_cast<std::size_t>(n);
  }
  if (::close(fd) != 0) {
    throw Error(source_ + ": cannot be written: " + std::string(std::strerror(errno)));
  }
}

}  // namespace wvr::detail::h5
