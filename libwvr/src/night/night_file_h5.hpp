#pragma once
// Thin checked wrappers over the HDF5 C API used by the night file reader and writer.
//
// The C API is used (not the C++ one) because every failing call must be turned into a
// wvr exception while HDF5's error stack still describes the cause: C++ wrappers close
// property lists during stack unwinding, which clears that stack.

#include <hdf5.h>

#include <cstdint>
#include <filesystem>
#include <memory>
#include <string>
#include <vector>

namespace wvr::detail::h5 {

// Owns an HDF5 identifier and closes it with the matching H5?close function.
class Id {
 public:
  using Closer = herr_t (*)(hid_t);
  Id() = default;
  Id(hid_t id, Closer closer) : id_(id), closer_(closer) {}
  Id(const Id&) = delete;
  Id& operator=(const Id&) = delete;
  Id(Id&& other) noexcept : id_(other.id_), closer_(other.closer_) { other.id_ = -1; }
  Id& operator=(Id&& other) noexcept;
  ~Id() { reset(); }

  hid_t get() const { return id_; }
  // Closes now; returns false if HDF5 reported a failure (e.g. a failed flush).
  bool reset();

 private:
  hid_t id_ = -1;
  Closer closer_ = nullptr;
};

// Turns off HDF5's automatic printing of error stacks to stderr while alive and restores
// the previous handler afterwards, so host programs (and h5py) keep their own setting.
class QuietErrors {
 public:
  QuietErrors();
  ~QuietErrors();
  QuietErrors(const QuietErrors&) = delete;
  QuietErrors& operator=(const QuietErrors&) = delete;

 private:
  H5E_auto2_t func_ = nullptr;
  void* data_ = nullptr;
};

// The innermost causes on the current HDF5 error stack, e.g. "truncated file: eof = 4096,
// sblock->base_addr = 0, stored_eof = 9120"; empty when the stack is empty.
std::string error_stack_text();

// `message` followed by ": " and error_stack_text() when the stack holds a cause.
std::string with_cause(const std::string& message);

// Shapes use HDF5's own extent type.
using Shape = std::vector<hsize_t>;
std::string shape_text(const Shape& shape);
// Number of elements of a shape (1 for a scalar).
hsize_t element_count(const Shape& shape);

// ---- reading ----------------------------------------------------------------------------

// Expected extent of one axis, named for messages ("antenna", "time", ...).
struct Axis {
  std::string name;
  hsize_t size = 0;
};

// A night file opened read-only. Every failure throws InvalidInput starting with the file
// name and naming the object path.
class Reader {
 public:
  // `threads` undo the filters of a dataset's chunks (0 = all cores); the values read do not
  // depend on it.
  explicit Reader(const std::filesystem::path& path, int threads = 0);

  const std::string& source() const { return source_; }
  hid_t file() const { return file_.get(); }

  [[noreturn]] void fail(const std::string& object_path, const std::string& what) const;

  // True if `path` (absolute, e.g. "/truth/episodes") names an existing object.
  bool exists(const std::string& path) const;
  Id open_group(const std::string& path) const;
  Id open_dataset(const std::string& path) const;
  Shape shape(hid_t dataset, const std::string& path) const;
  // Rank-1 dataset: its length (for the datasets that define a count).
  hsize_t length(const std::string& path) const;

  bool has_attribute(hid_t object, const std::string& name) const;
  std::string string_attribute(hid_t object,
                               const std::string& object_path,
                               const std::string& name) const;
  std::int64_t int_attribute(hid_t object,
                             const std::string& object_path,
                             const std::string& name) const;
  double double_attribute(hid_t object,
                          const std::string& object_path,
                          const std::string& name) const;
  // Names of all attributes of an object.
  std::vector<std::string> attribute_names(hid_t object, const std::string& object_path) const;
  // Names of the links in a group, in creation order when the group tracks it, else by name.
  std::vector<std::string> member_names(hid_t group, const std::string& group_path) const;
  // True if the object at `path` is a group (false: dataset; anything else fails).
  bool is_group(const std::string& path) const;

  // Whole-dataset reads after checking shape, type class and the units attribute.
  std::vector<double> read_doubles(const std::string& path,
                                   const std::vector<Axis>& axes,
                                   const std::string& units) const;
  std::vector<std::int32_t> read_int32s(const std::string& path,
                                        const std::vector<Axis>& axes,
                                        const std::string& units) const;
  std::vector<std::uint8_t> read_uint8s(const std::string& path,
                                        const std::vector<Axis>& axes,
                                        const std::string& units) const;
  std::vector<std::string> read_strings(const std::string& path,
                                        const std::vector<Axis>& axes,
                                        const std::string& units) const;

  void expect_units(hid_t dataset, const std::string& path, const std::string& units) const;
  void expect_shape(hid_t dataset, const std::string& path, const std::vector<Axis>& axes) const;
  // Reads a whole dataset converted to `memory_type` into `buffer` (sized by the caller).
  // A chunked dataset whose values need no conversion and whose filters are among shuffle,
  // deflate and Fletcher-32 is read chunk by chunk (H5Dread_chunk) with the filters undone on
  // `threads` threads; any other dataset, or one with a chunk that does not undo cleanly, goes
  // through HDF5's own read, whose verdict on damage stands; a stored chunk too short for its
  // Fletcher-32 checksum is refused before HDF5 reads it.
  void read_raw(hid_t dataset, const std::string& path, hid_t memory_type, void* buffer) const;
  std::vector<std::string> read_string_values(hid_t dataset,
                                              const std::string& path,
                                              hsize_t count) const;

 private:
  template <typename T>
  std::vector<T> read_numeric(const std::string& path,
                              const std::vector<Axis>& axes,
                              const std::string& units,
                              H5T_class_t type_class,
                              hid_t memory_type) const;

  // Fails naming `path` when a stored chunk of a Fletcher-32 dataset is shorter than the
  // checksum: HDF5 1.10's filter reads far past such a chunk (a crash found by fuzzing).
  void refuse_chunks_shorter_than_checksum(hid_t dataset, const std::string& path) const;
  bool read_chunks_on_threads(hid_t dataset,
                              const std::string& path,
                              hid_t memory_type,
                              void* buffer) const;

  std::string source_;
  Id file_;
  int threads_ = 0;
};

// ---- writing ----------------------------------------------------------------------------

// A night file built in memory (HDF5's core driver, no backing store) and written out in one
// piece by close_into(). Nothing touches the disk until then, so a failed write (a full disk)
// is one checked POSIX write, and the HDF5 file is always closed when the Writer goes away:
// a file left open would be flushed again by HDF5's exit handler.
// Failures throw wvr::Error naming `source`.
class Writer {
 public:
  // `start_from` empty: a new file; else a copy of that file's bytes to add objects to.
  // `gzip_level` 1-9 compresses chunked datasets (after byte shuffle); 0 leaves them raw.
  // Every non-scalar, non-empty dataset is chunked and carries a Fletcher-32 checksum.
  // `threads` (0 = all cores) compress the chunks of a dataset (night/chunk_filters.hpp).
  Writer(const std::filesystem::path& start_from,
         std::string source,
         int gzip_level,
         int threads = 0);
  ~Writer();
  Writer(const Writer&) = delete;
  Writer& operator=(const Writer&) = delete;

  hid_t file() const { return file_.get(); }
  [[noreturn]] void fail(const std::string& object_path, const std::string& what) const;

  // Creates a group; `track_order` records link creation order so readers list members in
  // the order they were written.
  Id create_group(hid_t parent, const std::string& path, bool track_order) const;
  Id open_group(const std::string& path) const;
  void delete_link(const std::string& path) const;

  void string_attribute(hid_t object,
                        const std::string& object_path,
                        const std::string& name,
                        const std::string& value) const;
  void int_attribute(hid_t object,
                     const std::string& object_path,
                     const std::string& name,
                     std::int32_t value) const;
  void double_attribute(hid_t object,
                        const std::string& object_path,
                        const std::string& name,
                        double value) const;

  // Writes a numeric dataset of `shape` from `data` (row-major), with a units attribute.
  // `chunk` empty: one chunk holding the whole dataset; otherwise this chunk shape
  // (compressed, see gzip_level).
  Id write_array(const std::string& path,
                 hid_t file_type,
                 hid_t memory_type,
                 const void* data,
                 const Shape& shape,
                 const Shape& chunk,
                 const std::string& units) const;
  Id write_strings(const std::string& path,
                   const std::vector<std::string>& values,
                   const std::string& units) const;

  // Closes the file and writes its bytes to `file` (created, must not exist). A full disk
  // throws Error "<source>: cannot be written: no space left on device".
  void close_into(const std::filesystem::path& file);

 private:
  // Dataset creation properties: chunked by `chunk`, optionally compressed, with a checksum.
  Id checked_layout(const std::string& path,
                    const Shape& shape,
                    const Shape& chunk,
                    bool compress) const;
  // Compresses the chunks of a new dataset on threads_ threads and stores them directly;
  // false (nothing written) when the memory layout differs from the file's.
  bool write_filtered_chunks(const std::string& path,
                             hid_t dataset,
                             hid_t file_type,
                             hid_t memory_type,
                             const void* data,
                             const Shape& shape,
                             const Shape& chunk) const;

  struct Image;
  std::string source_;
  int gzip_level_ = 4;
  int threads_ = 0;
  std::unique_ptr<Image> image_;  // declared before file_: outlives the open file
  Id file_;
};

// Chunk shape of a per-sample dataset [antenna, time, ...]: one antenna and up to 4096
// time samples per chunk, whole trailing axes. Empty (contiguous layout) when empty.
Shape per_sample_chunk(const Shape& shape);
// Chunk shape of any other dataset: contiguous (empty) under 64 KiB; otherwise the leading
// axes are halved until a chunk holds at most 256 KiB.
Shape generic_chunk(const Shape& shape, std::size_t element_size);

}  // namespace wvr::detail::h5
