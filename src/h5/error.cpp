// Checked HDF5 and MPI calls: failures become IoError carrying the library's own message.
#include "core/error.hpp"

#include <mutex>

#include "h5/detail.hpp"

namespace chaosweep::h5::detail {

namespace {

const char kNoMessage[] = "HDF5 reported no further detail";

/// H5Ewalk2 visitor: remembers the description of the last (innermost) entry walked.
herr_t keep_innermost(unsigned, const H5E_error2_t* entry, void* data) {
  auto* message = static_cast<std::string*>(data);
  if (entry->desc != nullptr && entry->desc[0] != '\0') *message = entry->desc;
  return 0;
}

}  // namespace

void silence_hdf5_errors() {
  static std::once_flag once;
  // An exception leaves the flag unset, so the next file operation tries again.
  std::call_once(once, [] {
    if (H5open() < 0 || H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr) < 0) {
      fail("starting the HDF5 library", "HDF5", "H5open or H5Eset_auto2 failed");
    }
  });
}

std::string hdf5_message() {
  std::string message;
  // Walking downward starts at the API call and ends where the error was first detected.
  if (H5Ewalk2(H5E_DEFAULT, H5E_WALK_DOWNWARD, keep_innermost, &message) < 0 || message.empty()) {
    message = kNoMessage;
  }
  H5Eclear2(H5E_DEFAULT);
  return message;
}

void fail(const std::string& what, const std::string& where) { fail(what, where, hdf5_message()); }

void fail(const std::string& what, const std::string& where, const std::string& reason) {
  throw IoError(what + ": " + where + ": " + reason);
}

hid_t check_id(hid_t id, const std::string& what, const std::string& where) {
  if (id < 0) fail(what, where);
  return id;
}

void check(herr_t status, const std::string& what, const std::string& where) {
  if (status < 0) fail(what, where);
}

bool check_tri(htri_t value, const std::string& what, const std::string& where) {
  if (value < 0) fail(what, where);
  return value > 0;
}

void check_mpi(int code, const std::string& what, const std::string& where) {
  if (code == MPI_SUCCESS) return;
  char text[MPI_MAX_ERROR_STRING];
  int length = 0;
  if (MPI_Error_string(code, text, &length) != MPI_SUCCESS) length = 0;
  fail(what, where, length > 0 ? std::string(text, length) : "MPI error " + std::to_string(code));
}

}  // namespace chaosweep::h5::detail
