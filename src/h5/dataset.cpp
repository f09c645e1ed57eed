// Datasets: shape, element type and dimension scales.
#include "h5/dataset.hpp"

#include <hdf5_hl.h>

#include <cstring>

#include "h5/detail.hpp"

namespace chaosweep::h5 {

Dims Dataset::shape() const {
  const std::string what = "reading dataset shape";
  Handle space(detail::check_id(H5Dget_space(id()), what, where()));
  const int rank = H5Sget_simple_extent_ndims(space.get());
  if (rank < 0) detail::fail(what, where());
  std::vector<hsize_t> extents(static_cast<std::size_t>(rank));
  if (rank > 0 && H5Sget_simple_extent_dims(space.get(), extents.data(), nullptr) < 0) {
    detail::fail(what, where());
  }
  return detail::to_dims(extents);
}

ElementType Dataset::element_type() const {
  const std::string what = "reading dataset element type";
  Handle type(detail::check_id(H5Dget_type(id()), what, where()));
  return detail::element_type_of_datatype(type.get(), what, where());
}

void Dataset::require_type(ElementType type, const char* doing) const {
  const ElementType stored = element_type();
  if (stored != type) {
    detail::fail(doing, where(), "dataset holds " + to_string(stored) + ", not " + to_string(type));
  }
}

void Dataset::require_block(const Dims& start, const Dims& count, const char* doing) const {
  const Dims extents = shape();
  if (start.size() != extents.size() || count.size() != extents.size()) {
    detail::fail(doing, where(),
                 "block has " + std::to_string(start.size()) + "/" + std::to_string(count.size()) +
                     " start/count entries for a dataset of " + std::to_string(extents.size()) +
                     " dimensions");
  }
  for (std::size_t d = 0; d < extents.size(); ++d) {
    if (count[d] > 0 && (start[d] > extents[d] || count[d] > extents[d] - start[d])) {
      detail::fail(doing, where(),
                   "block [" + std::to_string(start[d]) + ", " +
                       std::to_string(start[d] + count[d]) + ") leaves dimension " +
                       std::to_string(d) + " of extent " + std::to_string(extents[d]));
    }
  }
}

void Dataset::make_scale(const std::string& dimension_name) {
  const std::string what = "making dimension scale";
  if (shape().size() != 1) detail::fail(what, where(), "a dimension scale must be 1-D");
  const std::string name =
      dimension_name.empty() ? path().substr(path().rfind('/') + 1) : dimension_name;
  detail::check(H5DSset_scale(id(), name.c_str()), what, where());
}

void Dataset::attach_scale(const Dataset& scale, unsigned axis) {
  const std::string what =
      "attaching dimension scale " + scale.path() + " to axis " + std::to_string(axis);
  const Dims extents = shape();
  const Dims scale_extents = scale.shape();
  if (axis >= extents.size()) {
    detail::fail(what, where(), "dataset has " + std::to_string(extents.size()) + " axes");
  }
  if (!scale.is_scale()) detail::fail(what, where(), "not a dimension scale");
  if (scale_extents.size() != 1 || scale_extents[0] != extents[axis]) {
    detail::fail(what, where(),
                 "scale length differs from axis extent " + std::to_string(extents[axis]));
  }
  detail::check(H5DSattach_scale(id(), scale.id(), axis), what, where());
}

bool Dataset::is_scale() const {
  return detail::check_tri(H5DSis_scale(id()), "testing for a dimension scale", where());
}

bool Dataset::is_dimension_without_coordinates() const {
  if (!is_scale() || !has_attribute("NAME")) return false;
  const std::string name = string_attribute("NAME");
  const std::size_t length = std::strlen(detail::kDimensionWithoutCoordinates);
  return name.compare(0, length, detail::kDimensionWithoutCoordinates) == 0;
}

}  // namespace chaosweep::h5
