// Read-back checks of the sample file (sample_archive.hpp), reporting through GoogleTest.
#pragma once

#include <string>

namespace chaosweep::test {

/// Opens the file serially and checks every attribute, value, dimension scale and the
/// layout of groups. Called on one rank only.
void check_sample_serially(const std::string& path, int writer_ranks);

/// Collective: opens the file in parallel on MPI_COMM_WORLD; each rank reads and checks its
/// own member rows and the string coordinates.
void check_sample_in_parallel(const std::string& path);

}  // namespace chaosweep::test
