// Identifiers, error reporting and chunk layout shared by the night file reader and writer.

#include "night/night_file_h5.hpp"

#include <algorithm>
#include <sstream>
#include <utility>

namespace wvr::detail::h5 {

Id& Id::operator=(Id&& other) noexcept {
  if (this != &other) {
    reset();
    id_ = std::exchange(other.id_, -1);
    closer_ = other.closer_;
  }
  return *this;
}

bool Id::reset() {
  bool ok = true;
  if (id_ >= 0 && closer_ != nullptr) ok = closer_(id_) >= 0;
  id_ = -1;
  return ok;
}

QuietErrors::QuietErrors() {
  H5Eget_auto2(H5E_DEFAULT, &func_, &data_);
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
}

QuietErrors::~QuietErrors() { H5Eset_auto2(H5E_DEFAULT, func_, data_); }

namespace {

struct StackEntry {
  std::string description;
  hid_t minor = -1;
};

herr_t collect_entry(unsigned /*n*/, const H5E_error2_t* entry, void* client) {
  auto* entries = static_cast<std::vector<StackEntry>*>(client);
  entries->push_back({entry->desc != nullptr ? entry->desc : "", entry->min_num});
  return 0;
}

std::string minor_message(hid_t minor) {
  char text[256] = {};
  H5E_type_t type{};
  if (minor < 0 || H5Eget_msg(minor, &type, text, sizeof text) < 0) return {};
  return text;
}

}  // namespace

std::string error_stack_text() {
  // Walked innermost first; H5Eget_msg clears the stack, so it runs after the walk.
  std::vector<StackEntry> entries;
  H5Ewalk2(H5E_DEFAULT, H5E_WALK_UPWARD, collect_entry, &entries);
  if (entries.empty()) return {};
  std::string text = entries.front().description;
  const std::string minor = minor_message(entries.front().minor);
  if (!minor.empty() && minor != text) text = text.empty() ? minor : text + " (" + minor + ")";
  return text;
}

std::string shape_text(const Shape& shape) {
  std::ostringstream out;
  out << '[';
  for (std::size_t i = 0; i < shape.size(); ++i) out << (i > 0 ? ", " : "") << shape[i];
  out << ']';
  return out.str();
}

std::string with_cause(const std::string& message) {
  const std::string cause = error_stack_text();
  return cause.empty() ? message : message + ": " + cause;
}

hsize_t element_count(const Shape& shape) {
  hsize_t count = 1;
  for (hsize_t n : shape) count *= n;
  return count;
}

Shape per_sample_chunk(const Shape& shape) {
  if (shape.size() < 2 || element_count(shape) == 0) return {};
  Shape chunk = shape;
  chunk[0] = 1;
  chunk[1] = std::min<hsize_t>(shape[1], 4096);
  return chunk;
}

Shape generic_chunk(const Shape& shape, std::size_t element_size) {
  const hsize_t count = element_count(shape);
  if (shape.empty() || count == 0 || count * element_size < 64 * 1024) return {};
  Shape chunk = shape;
  for (std::size_t axis = 0; axis < chunk.size(); ++axis) {
    while (chunk[axis] > 1 && element_count(chunk) * element_size > 256 * 1024) {
      chunk[axis] = (chunk[axis] + 1) / 2;
    }
  }
  return chunk;
}

}  // namespace wvr::detail::h5
