// RAII ownership of one HDF5 identifier (file, group, dataset, attribute, dataspace, datatype
// or property list). Pure C++ interface: the identifier is held as the 64-bit integer HDF5
// uses for it, so this header needs no <hdf5.h>.
#pragma once

#include <cstdint>
#include <string>

namespace chaosweep::h5 {

/// Move-only owner of an HDF5 identifier. The destructor closes it without checking (it
/// never throws and prints nothing); call close() where a failure must be reported.
class Handle {
 public:
  Handle() noexcept = default;
  explicit Handle(std::int64_t id) noexcept : id_(id) {}
  Handle(Handle&& other) noexcept : id_(other.release()) {}
  Handle& operator=(Handle&& other) noexcept;
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  ~Handle() { reset(); }

  /// The identifier, or a negative value if this handle owns nothing.
  std::int64_t get() const noexcept { return id_; }
  bool valid() const noexcept { return id_ >= 0; }

  /// Gives up ownership and returns the identifier.
  std::int64_t release() noexcept;

  /// Closes the identifier, ignoring any failure. Safe on an empty handle.
  void reset() noexcept;

  /// Closes the identifier; on failure throws IoError("<what>: <where>: <HDF5 message>").
  void close(const std::string& what, const std::string& where);

 private:
  std::int64_t id_ = -1;
};

}  // namespace chaosweep::h5
