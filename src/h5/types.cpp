// Element types: names and their HDF5 datatypes in files and in memory.
#include "h5/types.hpp"

#include "h5/detail.hpp"

namespace chaosweep::h5 {

std::size_t element_count(const Dims& dims) {
  std::size_t count = 1;
  for (std::uint64_t extent : dims) count *= static_cast<std::size_t>(extent);
  return count;
}

std::string to_string(ElementType type) {
  switch (type) {
    case ElementType::Float64: return "float64";
    case ElementType::Int64: return "int64";
    case ElementType::UInt8: return "uint8";
    case ElementType::String: return "string";
  }
  return "unknown";
}

namespace detail {

hid_t file_type(ElementType type) {
  switch (type) {
    case ElementType::Float64: return H5T_IEEE_F64LE;
    case ElementType::Int64: return H5T_STD_I64LE;
    case ElementType::UInt8: return H5T_STD_U8LE;
    case ElementType::String: break;
  }
  return -1;
}

hid_t memory_type(ElementType type) {
  switch (type) {
    case ElementType::Float64: return H5T_NATIVE_DOUBLE;
    case ElementType::Int64: return H5T_NATIVE_INT64;
    case ElementType::UInt8: return H5T_NATIVE_UINT8;
    case ElementType::String: break;
  }
  return -1;
}

Handle string_type() {
  const std::string what = "making a UTF-8 string datatype";
  Handle type(check_id(H5Tcopy(H5T_C_S1), what, "memory"));
  check(H5Tset_size(type.get(), H5T_VARIABLE), what, "memory");
  check(H5Tset_cset(type.get(), H5T_CSET_UTF8), what, "memory");
  return type;
}

H5T_class_t type_class(hid_t type, const std::string& what, const std::string& where) {
  const H5T_class_t value = H5Tget_class(type);
  if (value == H5T_NO_CLASS) fail(what, where);
  return value;
}

std::size_t type_size(hid_t type, const std::string& what, const std::string& where) {
  const std::size_t value = H5Tget_size(type);
  if (value == 0) fail(what, where);
  return value;
}

H5T_sign_t type_sign(hid_t type, const std::string& what, const std::string& where) {
  const H5T_sign_t value = H5Tget_sign(type);
  if (value == H5T_SGN_ERROR) fail(what, where);
  return value;
}

ElementType element_type_of_datatype(hid_t type, const std::string& what,
                                     const std::string& where) {
  const H5T_class_t kind = type_class(type, what, where);
  const std::size_t size = type_size(type, what, where);
  if (kind == H5T_STRING) return ElementType::String;
  if (kind == H5T_FLOAT && size == 8) return ElementType::Float64;
  if (kind == H5T_INTEGER) {
    const H5T_sign_t sign = type_sign(type, what, where);
    if (size == 8 && sign == H5T_SGN_2) return ElementType::Int64;
    if (size == 1 && sign == H5T_SGN_NONE) return ElementType::UInt8;
  }
  fail(what, where,
       "element type is not float64, int64, uint8 or string (HDF5 class " +
           std::to_string(static_cast<int>(kind)) + ", " + std::to_string(size) + " bytes)");
}

std::vector<hsize_t> to_hsize(const Dims& dims) {
  return std::vector<hsize_t>(dims.begin(), dims.end());
}

Dims to_dims(const std::vector<hsize_t>& extents) { return Dims(extents.begin(), extents.end()); }

Handle make_space(const Dims& dims, const std::string& what, const std::string& where) {
  if (dims.empty()) return Handle(check_id(H5Screate(H5S_SCALAR), what, where));
  const std::vector<hsize_t> extents = to_hsize(dims);
  return Handle(check_id(
      H5Screate_simple(static_cast<int>(extents.size()), extents.data(), nullptr), what, where));
}

}  // namespace detail
}  // namespace chaosweep::h5
