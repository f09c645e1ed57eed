// A group: create and open members, list them, define dimensions.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "h5/dataset.hpp"
#include "h5/object.hpp"
#include "h5/types.hpp"

namespace chaosweep::h5 {

/// An open group. Paths given to members are relative to this group and may be nested
/// ("member/time_mean"); a leading '/' is not allowed.
///
/// Parallel files: every create_* call changes metadata, so every rank must make it, in the
/// same order and with the same arguments. Opening, existence tests and listing are local.
class Group : public Object {
 public:
  /// Creates a group, and any missing groups on its path.
  Group create_group(const std::string& path);
  Group open_group(const std::string& path) const;

  /// True if an object (group or dataset) exists at `path`; missing intermediate groups
  /// give false, not an error.
  bool exists(const std::string& path) const;
  bool has_group(const std::string& path) const;
  bool has_dataset(const std::string& path) const;
  /// Names of the direct members (groups and datasets), in name order.
  std::vector<std::string> members() const;

  /// Creates a dataset of the given element type and shape (contiguous layout unless
  /// `storage` says otherwise); missing groups on its path are created. With `fill`, elements
  /// never written read as `fill` (e.g. NaN for doubles); it must be representable in the
  /// element type, and strings take no fill (unwritten strings read as empty).
  Dataset create_dataset(const std::string& path, ElementType type, const Dims& shape,
                         std::optional<double> fill = std::nullopt, const Storage& storage = {});
  Dataset open_dataset(const std::string& path) const;

  /// Creates a dimension named `name` of length `size` that has no coordinate values, in the
  /// netCDF-4 way: a 1-D dimension-scale dataset whose NAME attribute is
  /// "This is a netCDF dimension but not a netCDF variable." followed by the size printed in
  /// ten columns. Readers following netCDF-4 (h5netcdf, xarray) then list `name` as a
  /// dimension but not as a variable. Attach it with Dataset::attach_scale.
  Dataset create_dimension(const std::string& name, std::uint64_t size);

 private:
  friend class File;
  using Object::Object;
};

}  // namespace chaosweep::h5
