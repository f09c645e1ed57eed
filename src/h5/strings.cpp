// Variable-length UTF-8 string datasets: reading, serial writing, and the writes rank 0
// makes after a parallel file is closed (HDF5 1.10 cannot write variable-length raw data
// through MPI-IO, collectively or independently).
#include <exception>

#include "core/error.hpp"
#include "h5/dataset.hpp"
#include "h5/detail.hpp"

namespace chaosweep::h5 {

namespace {

/// Frees the strings HDF5 allocated while reading variable-length data.
void reclaim(hid_t type, hid_t space, hid_t transfer, void* buffer) {
#if H5_VERSION_GE(1, 12, 0)
  (void)transfer;
  H5Treclaim(type, space, H5P_DEFAULT, buffer);
#else
  H5Dvlen_reclaim(type, space, transfer, buffer);
#endif
}

/// Splits `count` fixed-length strings of `size` bytes, dropping NUL and space padding.
std::vector<std::string> split_fixed(const std::vector<char>& buffer, std::size_t count,
                                     std::size_t size) {
  std::vector<std::string> values;
  values.reserve(count);
  for (std::size_t i = 0; i < count; ++i) {
    std::string text(buffer.data() + i * size, size);
    while (!text.empty() && (text.back() == '\0' || text.back() == ' ')) text.pop_back();
    values.push_back(std::move(text));
  }
  return values;
}

/// Rank 0's part of the deferred writes: reopen serially, write each kept dataset, close.
void write_deferred_serially(const detail::FileState& state) {
  const std::string what = "writing string datasets after the parallel close";
  Handle file(
      detail::check_id(H5Fopen(state.path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT), what, state.path));
  for (const detail::DeferredStrings& kept : state.deferred) {
    const std::string where = state.path + ":" + kept.dataset;
    Handle dataset(
        detail::check_id(H5Dopen2(file.get(), kept.dataset.c_str(), H5P_DEFAULT), what, where));
    detail::write_all_strings(dataset.get(), kept.values, where);
    dataset.close(what, where);
  }
  file.close(what, state.path);
}

/// Sends rank 0's `message` to every rank of `comm`.
std::string broadcast(std::string message, MPI_Comm comm, const std::string& where) {
  const std::string what = "sharing the outcome of the string writes";
  unsigned long long length = message.size();
  detail::check_mpi(MPI_Bcast(&length, 1, MPI_UNSIGNED_LONG_LONG, 0, comm), what, where);
  message.resize(static_cast<std::size_t>(length));
  if (length > 0) {
    detail::check_mpi(MPI_Bcast(message.data(), static_cast<int>(length), MPI_CHAR, 0, comm), what,
                      where);
  }
  return message;
}

}  // namespace

std::vector<std::string> Dataset::read_strings(const Dims& start, const Dims& count) const {
  const std::string what = "reading string dataset";
  require_type(ElementType::String, what.c_str());
  require_block(start, count, what.c_str());
  const std::size_t n = element_count(count);
  if (n == 0) return {};
  detail::Selection selection = detail::select_block(id(), start, count, false, what, where());
  Handle transfer = detail::transfer_list(*file(), false, where());
  // Read with the stored string type itself: HDF5 does not convert between character sets.
  Handle memory(detail::check_id(H5Dget_type(id()), what, where()));
  const hid_t memory_space = selection.memory_space.get();
  const hid_t file_space = selection.file_space.get();
  if (!detail::check_tri(H5Tis_variable_str(memory.get()), what, where())) {
    const std::size_t size = detail::type_size(memory.get(), what, where());
    std::vector<char> buffer(n * size);
    detail::check(
        H5Dread(id(), memory.get(), memory_space, file_space, transfer.get(), buffer.data()), what,
        where());
    return split_fixed(buffer, n, size);
  }
  std::vector<char*> texts(n, nullptr);
  if (H5Dread(id(), memory.get(), memory_space, file_space, transfer.get(), texts.data()) < 0) {
    const std::string reason = detail::hdf5_message();  // before the next call clears it
    for (char* text : texts) H5free_memory(text);  // the strings read before the failure
    detail::fail(what, where(), reason);
  }
  std::vector<std::string> values;
  values.reserve(n);
  for (const char* text : texts) values.emplace_back(text != nullptr ? text : "");
  reclaim(memory.get(), memory_space, transfer.get(), texts.data());
  return values;
}

namespace detail {

void write_all_strings(hid_t dataset, const std::vector<std::string>& values,
                       const std::string& where) {
  const std::string what = "writing string dataset";
  std::vector<const char*> texts;
  texts.reserve(values.size());
  for (const std::string& value : values) texts.push_back(value.c_str());
  Handle type = string_type();
  static const char* const kNoText = "";
  check(H5Dwrite(dataset, type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT,
                 texts.empty() ? &kNoText : texts.data()),
        what, where);
}

void write_deferred_strings(FileState& state) {
  std::string error;
  if (state.rank == 0) {
    try {
      write_deferred_serially(state);
    } catch (const std::exception& e) {
      error = e.what();
      if (error.empty()) error = "writing string datasets: " + state.path + ": failed";
    }
  }
  state.deferred.clear();
  state.deferred_string_calls = 0;
  error = broadcast(std::move(error), state.comm, state.path);
  if (!error.empty()) throw IoError(error);
}

}  // namespace detail
}  // namespace chaosweep::h5
