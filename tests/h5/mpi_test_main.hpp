// Shared by the MPI test executables of tests/h5: the command-line output directory and the
// communicator the tests run on.
#pragma once

#include <mpi.h>

#include <string>

namespace chaosweep::test {

/// Directory for files the tests write (first command-line argument after GoogleTest's).
const std::string& output_directory();

/// Rank and size of MPI_COMM_WORLD.
int world_rank();
int world_size();

/// "<output directory>/<stem>.np<ranks><suffix>": one name per rank count, so the ctest
/// entries for 1, 2, 3 and 4 ranks never share a file.
std::string output_path(const std::string& stem, const std::string& suffix);

}  // namespace chaosweep::test
