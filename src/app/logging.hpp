// Logging for the command line: spdlog, one line per message, the rank in every line.
// Rank 0 logs info and above; other ranks log warnings and errors only.
#pragma once

#include <string>

namespace chaosweep::app {

/// Sets up the default logger for `rank` of `size` ranks (size 0: not an MPI run).
void setup_logging(int rank, int size, bool verbose);

/// Prints one error line to stderr ("chaosweep: error: ..." or with the rank when size > 1).
void print_error(const std::string& message, int rank = 0, int size = 0);

}  // namespace chaosweep::app
