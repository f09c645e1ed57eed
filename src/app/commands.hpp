// The subcommands of the chaosweep program. Each returns the process exit status and throws
// chaosweep::Error for failures (caught once in main).
#pragma once

#include <string>

namespace chaosweep::app {

struct CheckOptions {
  std::string spec_path;
  int ranks = 1;
  bool calibrate = true;
};

struct RunOptions {
  std::string spec_path;
  std::string archive;  // overrides output.archive when not empty
  bool overwrite = false;
  std::string progress = "auto";
  bool verbose = false;
};

struct SummaryOptions {
  std::string archive;
  std::string format = "table";
};

int check_command(const CheckOptions& options);
int run_command(const RunOptions& options);  // needs MPI initialised
int summary_command(const SummaryOptions& options);

}  // namespace chaosweep::app
