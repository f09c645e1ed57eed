// A dataset: shape, collective raw-data writes, reads and dimension scales.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "h5/object.hpp"
#include "h5/types.hpp"

namespace chaosweep::h5 {

/// An open dataset of element type double, int64, uint8 or variable-length UTF-8 string.
///
/// Writes on a parallel file (File::create_parallel) are collective: every rank of the
/// file's communicator calls the same write function for the same dataset, each with its own
/// block; a rank with nothing to write passes a count containing a zero (an empty selection)
/// but still calls. Transfers use collective MPI-IO (H5FD_MPIO_COLLECTIVE).
///
/// Strings on a parallel file: HDF5 1.10 refuses any raw-data write of variable-length data
/// through the MPI-IO driver, collective or independent. write_strings_from_rank0() therefore
/// keeps rank 0's strings and File::close() writes them: after the collective close, rank 0
/// reopens the file with the default serial driver, writes every kept string dataset, closes
/// it, and broadcasts the outcome, so every rank returns or throws the same error. Until then
/// those datasets read back as empty strings. On a serial file strings are written at once.
///
/// Reads are local to the calling rank (independent transfer on a parallel file): any rank
/// may read alone. The element type must match exactly; there is no silent conversion. A read
/// whose elements, at their size in the file, would take more bytes than the whole file is
/// refused before any memory is allocated: only a damaged extent claims that, since this wrapper
/// writes no compressed datasets.
///
/// T is one of double, std::int64_t, std::uint8_t (and std::string for reads).
class Dataset : public Object {
 public:
  /// Extent of each dimension (empty for a scalar dataset).
  Dims shape() const;
  ElementType element_type() const;

  /// Collective: writes the block starting at `start` with extents `count` from `data`, which
  /// holds element_count(count) values in row-major order. A count with a zero selects nothing
  /// (data may then be null). Throws if the block leaves the dataset or the type differs.
  /// A dataset with no elements at all is not written (every rank returns at once).
  template <class T>
  void write(const Dims& start, const Dims& count, const T* data);
  /// As above; `values` must hold exactly element_count(count) values.
  template <class T>
  void write(const Dims& start, const Dims& count, const std::vector<T>& values);
  /// Collective: rank 0 writes the whole dataset from `values` (element_count(shape()) values,
  /// row-major); other ranks join with an empty selection and their `values` are ignored.
  template <class T>
  void write_from_rank0(const std::vector<T>& values);
  /// Collective: the whole string dataset gets rank 0's `values` (row-major); other ranks'
  /// values are ignored. On a parallel file the write happens in File::close() (see above).
  void write_strings_from_rank0(const std::vector<std::string>& values);

  /// Reads the whole dataset.
  template <class T>
  Array<T> read() const;
  /// Reads the block starting at `start` with extents `count`.
  template <class T>
  Array<T> read(const Dims& start, const Dims& count) const;

  /// Collective: makes this 1-D dataset a dimension scale (HDF5 H5DS) for the dimension named
  /// `dimension_name`, by default the dataset's own name. A reader such as
  /// xarray.open_dataset(engine="h5netcdf") names the dimension after the dataset and uses its
  /// values as the coordinate. Opened with group=G, xarray shows coordinate values only for
  /// scales inside G; a scale in another group still names the dimension, without values.
  void make_scale(const std::string& dimension_name = "");
  /// Collective: attaches `scale` (a 1-D dimension scale of this file, in any group, whose size
  /// equals shape()[axis]) to dimension `axis` of this dataset.
  void attach_scale(const Dataset& scale, unsigned axis);
  bool is_scale() const;
  /// True for a dimension made by Group::create_dimension (a named size, no coordinates).
  bool is_dimension_without_coordinates() const;

 private:
  friend class Group;
  using Object::Object;

  /// Collective write of a block; with `select_nothing` this rank joins without data.
  void write_raw(ElementType type, const Dims& start, const Dims& count, const void* data,
                 bool select_nothing = false);
  void read_raw(ElementType type, const Dims& start, const Dims& count, void* data) const;
  std::vector<std::string> read_strings(const Dims& start, const Dims& count) const;
  void require_type(ElementType type, const char* doing) const;
  void require_writable(const char* doing) const;
  void require_block(const Dims& start, const Dims& count, const char* doing) const;
  void require_fits_in_file(const Dims& count, const char* doing) const;
};

}  // namespace chaosweep::h5
