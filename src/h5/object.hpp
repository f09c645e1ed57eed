// Common part of groups and datasets: where they live and their attributes.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <type_traits>
#include <vector>

#include "h5/handle.hpp"

namespace chaosweep::h5 {

namespace detail {
struct FileState;
}

/// An open group or dataset of a File. Attributes are scalars: a variable-length UTF-8
/// string, a double or a 64-bit signed integer.
///
/// Parallel files: setting an attribute changes metadata, so every rank must call it with
/// the same name and the same value. Reading attributes is local to the calling rank.
class Object {
 public:
  Object(Object&&) noexcept = default;
  Object& operator=(Object&&) noexcept = default;
  ~Object() = default;

  /// Absolute path inside the file ("/" for the root group).
  const std::string& path() const { return path_; }

  /// "<file path>:<object path>", as used in error messages.
  std::string where() const;

  /// Creates the attribute, replacing an existing one of the same name (any type).
  void set_attribute(const std::string& name, const std::string& value);
  void set_attribute(const std::string& name, const char* value);
  void set_attribute(const std::string& name, double value);
  void set_attribute(const std::string& name, std::int64_t value);
  /// Any other integer type is stored as a 64-bit signed integer.
  template <class T, std::enable_if_t<std::is_integral_v<T> && !std::is_same_v<T, bool> &&
                                          !std::is_same_v<T, std::int64_t>,
                                      int> = 0>
  void set_attribute(const std::string& name, T value) {
    set_attribute(name, static_cast<std::int64_t>(value));
  }

  bool has_attribute(const std::string& name) const;
  /// Names of all attributes, in name order (includes those HDF5 itself adds, like CLASS).
  std::vector<std::string> attribute_names() const;

  /// Reads a string attribute, variable-length or fixed-length (trailing padding removed).
  std::string string_attribute(const std::string& name) const;
  /// Reads a numeric attribute of floating-point type as double.
  double double_attribute(const std::string& name) const;
  /// Reads a numeric attribute of integer type as int64.
  std::int64_t int64_attribute(const std::string& name) const;

 protected:
  Object(std::shared_ptr<detail::FileState> file, Handle id, std::string path);

  std::int64_t id() const { return id_.get(); }
  const std::shared_ptr<detail::FileState>& file() const { return file_; }
  /// Path of a member `name` (relative, may contain '/') of this group.
  std::string child_path(const std::string& name) const;
  /// where() of a member `name` of this group.
  std::string child_where(const std::string& name) const;

 private:
  void write_scalar_attribute(const std::string& name, std::int64_t file_type,
                              std::int64_t memory_type, const void* value);

  std::shared_ptr<detail::FileState> file_;
  Handle id_;
  std::string path_;
};

}  // namespace chaosweep::h5
