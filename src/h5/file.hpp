// An HDF5 file opened for parallel collective writing, or for reading (serially or in
// parallel).
#pragma once

#include <mpi.h>

#include <cstdint>
#include <memory>
#include <string>

#include "h5/group.hpp"
#include "h5/types.hpp"

namespace chaosweep::h5 {

/// An open HDF5 file. Every failure throws chaosweep::IoError whose message reads
/// "<what was being done>: <path>: <HDF5's own description>"; HDF5 prints nothing.
///
/// Parallel files: create_parallel, open_read_parallel, flush and close are collective over
/// the communicator, which must outlive the File. Close (or destroy) every Group and Dataset
/// of the file before closing it.
class File {
 public:
  /// Collective: creates (truncating) `path` for parallel writing through MPI-IO on `comm`.
  /// With `user_block` > 0 (a power of two, at least 512), the first `user_block` bytes of the
  /// file are left to the caller: HDF5 neither reads nor writes them.
  static File create_parallel(const std::string& path, MPI_Comm comm,
                              std::uint64_t user_block = 0);
  /// Creates (truncating) `path` for writing by this process alone (default driver).
  static File create_serial(const std::string& path);
  /// Opens `path` read-only for this process alone (default driver; no MPI needed).
  /// A file that is not HDF5 throws an IoError ("... file signature not found").
  static File open_read(const std::string& path);
  /// Collective: opens `path` read-only through MPI-IO on `comm`.
  static File open_read_parallel(const std::string& path, MPI_Comm comm);

  File(File&&) noexcept;
  File& operator=(File&&) noexcept;
  /// Closes the file if still open, ignoring failures. If the File is destroyed while an
  /// exception unwinds the stack, a parallel file is left open rather than entering the
  /// collective close alone (which could hang); the caller aborts every rank anyway.
  ~File();

  /// The root group "/".
  Group root() const;
  /// Shorthand for root().open_group(path).
  Group group(const std::string& path) const;

  /// Writes buffered data and metadata to disk (collective on a parallel file). Strings kept
  /// for the close (see Dataset::write_strings_from_rank0) are not written by a flush.
  void flush();
  /// Closes the file, reporting any failure (collective on a parallel file). On a parallel
  /// file opened for writing, rank 0 then writes the kept string datasets. Does nothing if
  /// already closed.
  void close();

  bool is_open() const;
  bool is_parallel() const;
  /// Rank of this process in the file's communicator, and the communicator's size
  /// (0 and 1 for a serial file).
  int rank() const;
  int ranks() const;
  const std::string& path() const;
  /// Collective vs independent raw-data writes HDF5 reported so far on this rank.
  TransferCounts transfers() const;

 private:
  explicit File(std::shared_ptr<detail::FileState> state);

  std::shared_ptr<detail::FileState> state_;
};

}  // namespace chaosweep::h5
