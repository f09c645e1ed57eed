// Scalar attributes of groups and datasets.
#include "h5/object.hpp"

#include <utility>

#include "h5/detail.hpp"

namespace chaosweep::h5 {

namespace {

/// Opens attribute `name` of object `id` for reading.
Handle open_attribute(hid_t id, const std::string& name, const std::string& where) {
  return Handle(
      detail::check_id(H5Aopen(id, name.c_str(), H5P_DEFAULT), "opening attribute " + name, where));
}

/// H5Aiterate2 visitor: appends each attribute name to a std::vector<std::string>.
herr_t collect_name(hid_t, const char* name, const H5A_info_t*, void* names) {
  static_cast<std::vector<std::string>*>(names)->push_back(name);
  return 0;
}

/// Opens attribute `name` of object `id` for reading one value: it must hold exactly one.
Handle open_single(hid_t id, const std::string& name, const std::string& what,
                   const std::string& where) {
  Handle attribute = open_attribute(id, name, where);
  Handle space(detail::check_id(H5Aget_space(attribute.get()), what, where));
  const hssize_t count = H5Sget_simple_extent_npoints(space.get());
  if (count < 0) detail::fail(what, where);
  if (count != 1) {
    detail::fail(what, where, "holds " + std::to_string(count) + " values, not one");
  }
  return attribute;
}

/// Removes trailing NUL and space padding of a fixed-length string.
std::string trim_padding(std::string text) {
  while (!text.empty() && (text.back() == '\0' || text.back() == ' ')) text.pop_back();
  return text;
}

}  // namespace

Object::Object(std::shared_ptr<detail::FileState> file, Handle id, std::string path)
    : file_(std::move(file)), id_(std::move(id)), path_(std::move(path)) {}

std::string Object::where() const { return (file_ ? file_->path : std::string()) + ":" + path_; }

std::string Object::child_path(const std::string& name) const {
  return path_ == "/" ? "/" + name : path_ + "/" + name;
}

std::string Object::child_where(const std::string& name) const {
  return (file_ ? file_->path : std::string()) + ":" + child_path(name);
}

void Object::write_scalar_attribute(const std::string& name, std::int64_t file_type,
                                    std::int64_t memory_type, const void* value) {
  const std::string what = "writing attribute " + name;
  if (detail::check_tri(H5Aexists(id(), name.c_str()), what, where())) {
    detail::check(H5Adelete(id(), name.c_str()), what, where());
  }
  Handle space = detail::make_space({}, what, where());
  Handle attribute(detail::check_id(
      H5Acreate2(id(), name.c_str(), file_type, space.get(), H5P_DEFAULT, H5P_DEFAULT), what,
      where()));
  detail::check(H5Awrite(attribute.get(), memory_type, value), what, where());
  attribute.close(what, where());
}

void Object::set_attribute(const std::string& name, const std::string& value) {
  Handle type = detail::string_type();
  const char* text = value.c_str();
  write_scalar_attribute(name, type.get(), type.get(), &text);
}

void Object::set_attribute(const std::string& name, const char* value) {
  set_attribute(name, std::string(value));
}

void Object::set_attribute(const std::string& name, double value) {
  write_scalar_attribute(name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, &value);
}

void Object::set_attribute(const std::string& name, std::int64_t value) {
  write_scalar_attribute(name, H5T_STD_I64LE, H5T_NATIVE_INT64, &value);
}

bool Object::has_attribute(const std::string& name) const {
  return detail::check_tri(H5Aexists(id(), name.c_str()), "looking for attribute " + name, where());
}

std::vector<std::string> Object::attribute_names() const {
  std::vector<std::string> names;
  hsize_t next = 0;
  detail::check(H5Aiterate2(id(), H5_INDEX_NAME, H5_ITER_INC, &next, collect_name, &names),
                "listing attributes", where());
  return names;
}

std::string Object::string_attribute(const std::string& name) const {
  const std::string what = "reading string attribute " + name;
  Handle attribute = open_single(id(), name, what, where());
  Handle type(detail::check_id(H5Aget_type(attribute.get()), what, where()));
  if (detail::type_class(type.get(), what, where()) != H5T_STRING) {
    detail::fail(what, where(), "not a string");
  }
  if (detail::check_tri(H5Tis_variable_str(type.get()), what, where())) {
    char* text = nullptr;
    if (H5Aread(attribute.get(), type.get(), &text) < 0) {
      const std::string reason = detail::hdf5_message();  // before the next call clears it
      H5free_memory(text);  // a read that failed half-way may have allocated the string
      detail::fail(what, where(), reason);
    }
    std::string value = text != nullptr ? text : "";
    H5free_memory(text);
    return value;
  }
  std::string value(detail::type_size(type.get(), what, where()), '\0');
  detail::check(H5Aread(attribute.get(), type.get(), value.data()), what, where());
  return trim_padding(std::move(value));
}

double Object::double_attribute(const std::string& name) const {
  const std::string what = "reading floating-point attribute " + name;
  Handle attribute = open_single(id(), name, what, where());
  Handle type(detail::check_id(H5Aget_type(attribute.get()), what, where()));
  if (detail::type_class(type.get(), what, where()) != H5T_FLOAT) {
    detail::fail(what, where(), "not floating-point");
  }
  double value = 0.0;
  detail::check(H5Aread(attribute.get(), H5T_NATIVE_DOUBLE, &value), what, where());
  return value;
}

std::int64_t Object::int64_attribute(const std::string& name) const {
  const std::string what = "reading integer attribute " + name;
  Handle attribute = open_single(id(), name, what, where());
  Handle type(detail::check_id(H5Aget_type(attribute.get()), what, where()));
  if (detail::type_class(type.get(), what, where()) != H5T_INTEGER) {
    detail::fail(what, where(), "not an integer");
  }
  std::int64_t value = 0;
  detail::check(H5Aread(attribute.get(), H5T_NATIVE_INT64, &value), what, where());
  return value;
}

}  // namespace chaosweep::h5
