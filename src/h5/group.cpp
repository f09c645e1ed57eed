// Groups: creating and opening members, existence tests, listing, netCDF-4 dimensions.
#include "h5/group.hpp"

#include <algorithm>

#include <hdf5_hl.h>

#include <cmath>
#include <cstdio>
#include <utility>

#include "h5/detail.hpp"

namespace chaosweep::h5 {

namespace {

/// Member paths are relative to the group: not empty, no leading or trailing '/'.
void require_relative(const std::string& path, const std::string& what, const std::string& where) {
  if (path.empty() || path.front() == '/' || path.back() == '/') {
    detail::fail(what, where, "member path must be relative and name a member");
  }
}

/// Link-creation property list that also creates missing groups on the path.
Handle with_intermediate_groups(const std::string& what, const std::string& where) {
  Handle list(detail::check_id(H5Pcreate(H5P_LINK_CREATE), what, where));
  detail::check(H5Pset_create_intermediate_group(list.get(), 1), what, where);
  return list;
}

/// Kind of object at `path` below `group` (H5I_GROUP, H5I_DATASET, ...), H5I_BADID if none.
H5I_type_t kind_at(hid_t group, const std::string& path, const std::string& where) {
  const std::string what = "looking for " + path;
  for (std::size_t end = path.find('/');; end = path.find('/', end + 1)) {
    const std::string prefix = path.substr(0, end);
    if (!detail::check_tri(H5Lexists(group, prefix.c_str(), H5P_DEFAULT), what, where)) {
      return H5I_BADID;
    }
    if (end == std::string::npos) break;
  }
  Handle object(detail::check_id(H5Oopen(group, path.c_str(), H5P_DEFAULT), what, where));
  return H5Iget_type(object.get());
}

/// Sets the fill value of a dataset-creation list, converted exactly to the element type.
void set_fill(hid_t list, ElementType type, double fill, const std::string& what,
              const std::string& where) {
  const bool integral = std::isfinite(fill) && std::trunc(fill) == fill;
  if (type == ElementType::Float64) {
    detail::check(H5Pset_fill_value(list, H5T_NATIVE_DOUBLE, &fill), what, where);
  } else if (type == ElementType::Int64 && integral && std::fabs(fill) < 9.0e18) {
    const auto value = static_cast<std::int64_t>(fill);
    detail::check(H5Pset_fill_value(list, H5T_NATIVE_INT64, &value), what, where);
  } else if (type == ElementType::UInt8 && integral && fill >= 0.0 && fill <= 255.0) {
    const auto value = static_cast<std::uint8_t>(fill);
    detail::check(H5Pset_fill_value(list, H5T_NATIVE_UINT8, &value), what, where);
  } else {
    detail::fail(what, where, "fill value is not representable as " + to_string(type));
  }
}

/// Chunks (and compression) of a dataset-creation list. A chunk has as many dimensions as the
/// dataset, each at least 1 and at most the dataset's extent.
void set_storage(hid_t list, const Dims& shape, const Storage& storage, const std::string& what,
                 const std::string& where) {
  if (storage.chunk.size() != shape.size()) {
    detail::fail(what, where, "a chunk of " + std::to_string(storage.chunk.size()) +
                                  " dimensions for a dataset of " + std::to_string(shape.size()));
  }
  std::vector<hsize_t> chunk;
  for (std::size_t i = 0; i < shape.size(); ++i) {
    if (storage.chunk[i] == 0 || storage.chunk[i] > std::max<std::uint64_t>(shape[i], 1)) {
      detail::fail(what, where, "chunk extent " + std::to_string(storage.chunk[i]) +
                                    " outside 1 .. " + std::to_string(shape[i]));
    }
    chunk.push_back(static_cast<hsize_t>(storage.chunk[i]));
  }
  detail::check(H5Pset_chunk(list, static_cast<int>(chunk.size()), chunk.data()), what, where);
  if (storage.deflate < 0 || storage.deflate > 9) {
    detail::fail(what, where, "deflate level " + std::to_string(storage.deflate) + " outside 0-9");
  }
  if (storage.deflate > 0) {
    detail::check(H5Pset_shuffle(list), what, where);
    detail::check(H5Pset_deflate(list, static_cast<unsigned>(storage.deflate)), what, where);
  }
}

}  // namespace

Group Group::create_group(const std::string& path) {
  const std::string what = "creating group";
  const std::string where = child_where(path);
  require_relative(path, what, where);
  Handle links = with_intermediate_groups(what, where);
  Handle group(detail::check_id(
      H5Gcreate2(id(), path.c_str(), links.get(), H5P_DEFAULT, H5P_DEFAULT), what, where));
  return Group(file(), std::move(group), child_path(path));
}

Group Group::open_group(const std::string& path) const {
  const std::string what = "opening group";
  const std::string where = child_where(path);
  require_relative(path, what, where);
  Handle group(detail::check_id(H5Gopen2(id(), path.c_str(), H5P_DEFAULT), what, where));
  return Group(file(), std::move(group), child_path(path));
}

bool Group::exists(const std::string& path) const {
  require_relative(path, "looking for " + path, where());
  return kind_at(id(), path, where()) != H5I_BADID;
}

bool Group::has_group(const std::string& path) const {
  require_relative(path, "looking for " + path, where());
  return kind_at(id(), path, where()) == H5I_GROUP;
}

bool Group::has_dataset(const std::string& path) const {
  require_relative(path, "looking for " + path, where());
  return kind_at(id(), path, where()) == H5I_DATASET;
}

std::vector<std::string> Group::members() const {
  const std::string what = "listing group members";
  H5G_info_t info;
  detail::check(H5Gget_info(id(), &info), what, where());
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.nlinks; ++i) {
    const ssize_t length =
        H5Lget_name_by_idx(id(), ".", H5_INDEX_NAME, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT);
    if (length < 0) detail::fail(what, where());
    std::string name(static_cast<std::size_t>(length) + 1, '\0');
    if (H5Lget_name_by_idx(id(), ".", H5_INDEX_NAME, H5_ITER_INC, i, name.data(), name.size(),
                           H5P_DEFAULT) < 0) {
      detail::fail(what, where());
    }
    name.resize(static_cast<std::size_t>(length));
    names.push_back(std::move(name));
  }
  return names;
}

Dataset Group::create_dataset(const std::string& path, ElementType type, const Dims& shape,
                              std::optional<double> fill, const Storage& storage) {
  const std::string what = "creating " + to_string(type) + " dataset";
  const std::string where = child_where(path);
  require_relative(path, what, where);
  Handle string = type == ElementType::String ? detail::string_type() : Handle();
  const hid_t stored = type == ElementType::String ? string.get() : detail::file_type(type);
  Handle space = detail::make_space(shape, what, where);
  Handle links = with_intermediate_groups(what, where);
  Handle creation(detail::check_id(H5Pcreate(H5P_DATASET_CREATE), what, where));
  if (fill) set_fill(creation.get(), type, *fill, what, where);
  if (!storage.chunk.empty()) set_storage(creation.get(), shape, storage, what, where);
  Handle dataset(detail::check_id(
      H5Dcreate2(id(), path.c_str(), stored, space.get(), links.get(), creation.get(), H5P_DEFAULT),
      what, where));
  return Dataset(file(), std::move(dataset), child_path(path));
}

Dataset Group::open_dataset(const std::string& path) const {
  const std::string what = "opening dataset";
  const std::string where = child_where(path);
  require_relative(path, what, where);
  Handle dataset(detail::check_id(H5Dopen2(id(), path.c_str(), H5P_DEFAULT), what, where));
  return Dataset(file(), std::move(dataset), child_path(path));
}

Dataset Group::create_dimension(const std::string& name, std::uint64_t size) {
  const std::string what = "creating dimension";
  const std::string where = child_where(name);
  require_relative(name, what, where);
  // The netCDF-4 convention: a 32-bit float scale that is never written, labelled with the
  // sentence readers look for and the length in ten columns.
  Handle space = detail::make_space({size}, what, where);
  Handle links = with_intermediate_groups(what, where);
  Handle dataset(detail::check_id(H5Dcreate2(id(), name.c_str(), H5T_IEEE_F32BE, space.get(),
                                             links.get(), H5P_DEFAULT, H5P_DEFAULT),
                                  what, where));
  char label[96];
  std::snprintf(label, sizeof label, "%s%10llu", detail::kDimensionWithoutCoordinates,
                static_cast<unsigned long long>(size));
  detail::check(H5DSset_scale(dataset.get(), label), what, where);
  return Dataset(file(), std::move(dataset), child_path(name));
}

}  // namespace chaosweep::h5
