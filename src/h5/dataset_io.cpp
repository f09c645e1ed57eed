// Datasets: collective raw-data writes and local reads of numeric and string data.
#include <type_traits>

#include "h5/dataset.hpp"
#include "h5/detail.hpp"

namespace chaosweep::h5 {
namespace detail {

Selection select_block(hid_t dataset, const Dims& start, const Dims& count, bool nothing,
                       const std::string& what, const std::string& where) {
  Selection selection;
  selection.file_space = Handle(check_id(H5Dget_space(dataset), what, where));
  const hid_t file_space = selection.file_space.get();
  if (nothing || element_count(count) == 0) {
    check(H5Sselect_none(file_space), what, where);
    selection.memory_space = make_space({1}, what, where);
    check(H5Sselect_none(selection.memory_space.get()), what, where);
  } else if (count.empty()) {
    selection.memory_space = make_space({}, what, where);  // the one element of a scalar
  } else {
    const std::vector<hsize_t> first = to_hsize(start);
    const std::vector<hsize_t> extents = to_hsize(count);
    check(H5Sselect_hyperslab(file_space, H5S_SELECT_SET, first.data(), nullptr, extents.data(),
                              nullptr),
          what, where);
    selection.memory_space = make_space(count, what, where);
  }
  return selection;
}

Handle transfer_list(const FileState& file, bool collective, const std::string& where) {
  const std::string what = "making a transfer property list";
  Handle list(check_id(H5Pcreate(H5P_DATASET_XFER), what, where));
  if (file.parallel) {
    const H5FD_mpio_xfer_t mode = collective ? H5FD_MPIO_COLLECTIVE : H5FD_MPIO_INDEPENDENT;
    check(H5Pset_dxpl_mpio(list.get(), mode), what, where);
  }
  return list;
}

void record_transfer(FileState& file, hid_t transfer, const std::string& where) {
  if (!file.parallel) return;
  H5D_mpio_actual_io_mode_t mode = H5D_MPIO_NO_COLLECTIVE;
  check(H5Pget_mpio_actual_io_mode(transfer, &mode), "reading the transfer mode", where);
  if (mode == H5D_MPIO_NO_COLLECTIVE) {
    ++file.transfers.independent;
  } else {
    ++file.transfers.collective;
  }
}

}  // namespace detail

void Dataset::require_writable(const char* doing) const {
  if (!file()->writable) detail::fail(doing, where(), "the file is open read-only");
}

void Dataset::write_raw(ElementType type, const Dims& start, const Dims& count, const void* data,
                        bool select_nothing) {
  const char* what = "writing dataset";
  require_writable(what);
  require_type(type, what);
  if (!select_nothing) require_block(start, count, what);
  // A dataset without elements has no storage, and HDF5 1.10 fails a collective write to it
  // even with nothing selected; every rank sees the same shape, so every rank returns here.
  if (element_count(shape()) == 0) return;
  detail::Selection selection =
      detail::select_block(id(), start, count, select_nothing, what, where());
  Handle transfer = detail::transfer_list(*file(), true, where());
  static const char kNoData = 0;  // HDF5 wants a buffer even when nothing is selected
  if (data == nullptr) data = &kNoData;
  detail::check(H5Dwrite(id(), detail::memory_type(type), selection.memory_space.get(),
                         selection.file_space.get(), transfer.get(), data),
                what, where());
  detail::record_transfer(*file(), transfer.get(), where());
}

template <class T>
void Dataset::write(const Dims& start, const Dims& count, const T* data) {
  static_assert(!std::is_same_v<T, std::string>, "use write_strings_from_rank0");
  write_raw(element_type_of<T>(), start, count, data);
}

template <class T>
void Dataset::write(const Dims& start, const Dims& count, const std::vector<T>& values) {
  if (values.size() != element_count(count)) {
    detail::fail("writing dataset", where(),
                 "buffer holds " + std::to_string(values.size()) + " values, block needs " +
                     std::to_string(element_count(count)));
  }
  write(start, count, values.data());
}

template <class T>
void Dataset::write_from_rank0(const std::vector<T>& values) {
  const Dims extents = shape();
  const Dims origin(extents.size(), 0);
  if (file()->rank == 0) {
    write(origin, extents, values);
  } else {
    write_raw(element_type_of<T>(), origin, extents, nullptr, /*select_nothing=*/true);
  }
}

void Dataset::write_strings_from_rank0(const std::vector<std::string>& values) {
  const char* what = "writing string dataset";
  require_writable(what);
  require_type(ElementType::String, what);
  detail::FileState& state = *file();
  const std::size_t needed = element_count(shape());
  if (state.rank == 0 && values.size() != needed) {
    detail::fail(what, where(),
                 std::to_string(values.size()) + " strings given for " + std::to_string(needed) +
                     " elements");
  }
  if (!state.parallel) {
    detail::write_all_strings(id(), values, where());
    return;
  }
  ++state.deferred_string_calls;
  if (state.rank == 0) state.deferred.push_back({path(), values});
}

void Dataset::read_raw(ElementType type, const Dims& start, const Dims& count, void* data) const {
  const char* what = "reading dataset";
  require_type(type, what);
  require_block(start, count, what);
  if (element_count(count) == 0) return;
  detail::Selection selection = detail::select_block(id(), start, count, false, what, where());
  Handle transfer = detail::transfer_list(*file(), false, where());
  detail::check(H5Dread(id(), detail::memory_type(type), selection.memory_space.get(),
                        selection.file_space.get(), transfer.get(), data),
                what, where());
}

void Dataset::require_fits_in_file(const Dims& count, const char* doing) const {
  for (std::uint64_t extent : count) {
    if (extent == 0) return;
  }
  Handle type(detail::check_id(H5Dget_type(id()), doing, where()));
  // Bytes each element takes in the file, at least: a variable-length string takes a 16-byte
  // heap reference there, and H5Tget_size gives the 8 bytes of its in-memory pointer.
  const std::uint64_t element_bytes = detail::type_size(type.get(), doing, where());
  hsize_t file_bytes = 0;
  detail::check(H5Fget_filesize(file()->id.get(), &file_bytes), doing, where());
  // Elements the file could hold; dividing by each extent in turn never overflows, unlike the
  // product of the extents.
  std::uint64_t room = element_bytes > 0 ? file_bytes / element_bytes : file_bytes;
  std::string extents;
  for (std::uint64_t extent : count) {
    extents += (extents.empty() ? "" : " x ") + std::to_string(extent);
  }
  for (std::uint64_t extent : count) {
    if (extent > room) {
      detail::fail(doing, where(),
                   "the file is damaged: " + extents + " elements cannot fit in its " +
                       std::to_string(file_bytes) + " bytes");
    }
    room /= extent;
  }
}

template <class T>
Array<T> Dataset::read(const Dims& start, const Dims& count) const {
  require_block(start, count, "reading dataset");
  require_fits_in_file(count, "reading dataset");
  if constexpr (std::is_same_v<T, std::string>) {
    return Array<T>{count, read_strings(start, count)};
  } else {
    Array<T> block{count, std::vector<T>(element_count(count))};
    read_raw(element_type_of<T>(), start, count, block.values.data());
    return block;
  }
}

template <class T>
Array<T> Dataset::read() const {
  const Dims extents = shape();
  return read<T>(Dims(extents.size(), 0), extents);
}

template void Dataset::write(const Dims&, const Dims&, const double*);
template void Dataset::write(const Dims&, const Dims&, const std::int64_t*);
template void Dataset::write(const Dims&, const Dims&, const std::uint8_t*);
template void Dataset::write(const Dims&, const Dims&, const std::vector<double>&);
template void Dataset::write(const Dims&, const Dims&, const std::vector<std::int64_t>&);
template void Dataset::write(const Dims&, const Dims&, const std::vector<std::uint8_t>&);
template void Dataset::write_from_rank0(const std::vector<double>&);
template void Dataset::write_from_rank0(const std::vector<std::int64_t>&);
template void Dataset::write_from_rank0(const std::vector<std::uint8_t>&);
template Array<double> Dataset::read() const;
template Array<std::int64_t> Dataset::read() const;
template Array<std::uint8_t> Dataset::read() const;
template Array<std::string> Dataset::read() const;
template Array<double> Dataset::read(const Dims&, const Dims&) const;
template Array<std::int64_t> Dataset::read(const Dims&, const Dims&) const;
template Array<std::uint8_t> Dataset::read(const Dims&, const Dims&) const;
template Array<std::string> Dataset::read(const Dims&, const Dims&) const;

}  // namespace chaosweep::h5
