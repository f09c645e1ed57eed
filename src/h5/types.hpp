// Vocabulary of the HDF5 layer: shapes, element types and read results.
// Pure: no HDF5 and no MPI in this header.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace chaosweep::h5 {

/// Extent of a dataset or selection, one entry per dimension, slowest-varying first
/// (row-major, as in C). An empty Dims is the shape of a scalar dataset.
using Dims = std::vector<std::uint64_t>;

/// How a dataset's elements are stored: contiguous (no chunk), or in chunks of `chunk`
/// elements per dimension, then with `deflate` 1-9 each chunk byte-shuffled and compressed
/// (zlib). Chunked and compressed datasets are written collectively on parallel files.
struct Storage {
  Dims chunk;       // empty: contiguous
  int deflate = 0;  // 0: not compressed (needs a chunk otherwise)
};

/// Number of elements in a block of shape `dims` (1 for a scalar, 0 if any extent is 0).
std::size_t element_count(const Dims& dims);

/// Element types the archive uses. Files store them little-endian (Float64: IEEE binary64,
/// Int64: signed, UInt8: unsigned); String is a variable-length UTF-8 string, which h5py
/// returns as `str` and xarray as an object array of `str`.
enum class ElementType { Float64, Int64, UInt8, String };

/// Lower-case name of an element type, for messages ("float64", "int64", "uint8", "string").
std::string to_string(ElementType type);

/// The element type that stores values of C++ type T (double, std::int64_t, std::uint8_t,
/// std::string); no other T compiles.
template <class T>
constexpr ElementType element_type_of();
template <>
constexpr ElementType element_type_of<double>() {
  return ElementType::Float64;
}
template <>
constexpr ElementType element_type_of<std::int64_t>() {
  return ElementType::Int64;
}
template <>
constexpr ElementType element_type_of<std::uint8_t>() {
  return ElementType::UInt8;
}
template <>
constexpr ElementType element_type_of<std::string>() {
  return ElementType::String;
}

/// A block of values read from a dataset: `values` holds element_count(shape) values in
/// row-major order, so element (i, j, k) of a 3-D block sits at (i*shape[1] + j)*shape[2] + k.
template <class T>
struct Array {
  Dims shape;
  std::vector<T> values;
};

/// How many raw-data writes on a parallel file HDF5 actually performed collectively, and how
/// many it fell back to independent I/O for (as reported by the MPI-IO driver after each write).
struct TransferCounts {
  std::size_t collective = 0;
  std::size_t independent = 0;
};

}  // namespace chaosweep::h5
