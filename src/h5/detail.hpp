// Private to src/h5 (include only from its .cpp files): checked HDF5 and MPI calls, the shared
// state of an open file, and the mapping of element types to HDF5 datatypes. This is the one
// header that includes <hdf5.h>.
#pragma once

#include <hdf5.h>
#include <mpi.h>

#include <cstdint>
#include <string>
#include <type_traits>
#include <vector>

#include "h5/handle.hpp"
#include "h5/types.hpp"

namespace chaosweep::h5::detail {

static_assert(std::is_same_v<hid_t, std::int64_t>, "Handle stores hid_t as std::int64_t");
static_assert(sizeof(hsize_t) == sizeof(std::uint64_t), "Dims stores hsize_t values");

/// Turns HDF5's automatic error printing off (once per process) and initialises the library.
void silence_hdf5_errors();

/// The innermost description on HDF5's current error stack (where the failure was detected),
/// or a fallback if HDF5 recorded none; clears the stack.
std::string hdf5_message();

/// Throws IoError("<what>: <where>: <HDF5 message>").
[[noreturn]] void fail(const std::string& what, const std::string& where);
/// Throws IoError("<what>: <where>: <reason>") for a failure found by this layer itself.
[[noreturn]] void fail(const std::string& what, const std::string& where,
                       const std::string& reason);

/// Checked calls: a negative identifier or status throws through fail(what, where).
hid_t check_id(hid_t id, const std::string& what, const std::string& where);
void check(herr_t status, const std::string& what, const std::string& where);
bool check_tri(htri_t value, const std::string& what, const std::string& where);
/// A failed MPI call throws IoError with MPI's own error string.
void check_mpi(int code, const std::string& what, const std::string& where);

/// String datasets whose values rank 0 writes when a parallel file closes.
struct DeferredStrings {
  std::string dataset;              // absolute path inside the file
  std::vector<std::string> values;  // row-major; kept on rank 0 only
};

/// What every Group and Dataset of an open file shares with its File.
struct FileState {
  Handle id;
  std::string path;
  bool parallel = false;
  bool writable = false;
  MPI_Comm comm = MPI_COMM_NULL;
  int rank = 0;
  int ranks = 1;
  int uncaught_at_open = 0;               // std::uncaught_exceptions() when opened
  std::size_t deferred_string_calls = 0;  // counted on every rank, so all agree
  std::vector<DeferredStrings> deferred;  // rank 0 only
  TransferCounts transfers;
};

/// The NAME that marks a dimension scale as a netCDF-4 dimension without coordinate values.
inline constexpr char kDimensionWithoutCoordinates[] =
    "This is a netCDF dimension but not a netCDF variable.";

/// Datatype stored in files for a numeric element type (little-endian).
hid_t file_type(ElementType type);
/// Native in-memory datatype of a numeric element type.
hid_t memory_type(ElementType type);
/// Checked H5Tget_class, H5Tget_size and H5Tget_sign.
H5T_class_t type_class(hid_t type, const std::string& what, const std::string& where);
std::size_t type_size(hid_t type, const std::string& what, const std::string& where);
H5T_sign_t type_sign(hid_t type, const std::string& what, const std::string& where);
/// A new variable-length UTF-8 string datatype.
Handle string_type();
/// The element type of the datatype `type`, or fail(what, where) if it is none of ours.
ElementType element_type_of_datatype(hid_t type, const std::string& what, const std::string& where);

/// A new dataset-transfer property list: MPI-IO collective (or independent) on a parallel
/// file, the defaults on a serial one.
Handle transfer_list(const FileState& file, bool collective, const std::string& where);
/// Counts a finished raw-data write as collective or independent (parallel files only).
void record_transfer(FileState& file, hid_t transfer, const std::string& where);

/// `dims` as the hsize_t array HDF5 takes (std::uint64_t and hsize_t are distinct types).
std::vector<hsize_t> to_hsize(const Dims& dims);
/// HDF5's extents as Dims.
Dims to_dims(const std::vector<hsize_t>& extents);

/// A dataspace of shape `dims` (scalar for empty dims).
Handle make_space(const Dims& dims, const std::string& what, const std::string& where);

/// The elements a transfer touches, in the file and in a contiguous memory buffer.
struct Selection {
  Handle file_space;
  Handle memory_space;
};
/// Selects the block (start, count) of `dataset`; selects nothing if `nothing` is set or the
/// block is empty (a rank joining a collective write without data).
Selection select_block(hid_t dataset, const Dims& start, const Dims& count, bool nothing,
                       const std::string& what, const std::string& where);

/// Writes all of `values` (row-major) to the string dataset `dataset` with the default
/// transfer; only for files opened without MPI-IO.
void write_all_strings(hid_t dataset, const std::vector<std::string>& values,
                       const std::string& where);

/// Rank 0 writes the file's deferred strings after it was closed; the outcome is broadcast
/// so every rank returns, or throws the same IoError. Collective.
void write_deferred_strings(FileState& file);

}  // namespace chaosweep::h5::detail
