// The subcommands of the chaosweep program. Each returns the process exit status and throws
// chaosweep::Error for failures (caught once in main).
#pragma once

#include <string>
#include <vector>

#include "app/pilot.hpp"

namespace chaosweep::app {

struct CheckOptions {
  std::string spec_path;
  int ranks = 1;
  bool calibrate = true;
  bool pilot = false;  // also run the planning pilot (app/pilot.hpp)
  PilotOptions pilot_options;
  bool pilot_options_given = false;  // a pilot option was on the command line
};

struct RunOptions {
  std::string spec_path;
  std::string archive;  // overrides output.archive when not empty
  bool overwrite = false;
  bool resume = false;                 // continue from the campaign's checkpoints
  bool restart_from_scratch = false;   // with resume: start over if no checkpoint is usable
  std::string part;                    // "I/N": run part I of N into a part archive
  std::string progress = "auto";
  bool verbose = false;
};

struct SummaryOptions {
  std::string archive;
  std::string format = "table";
  bool no_verify = false;  // skip the archive's checksum (archive/seal.hpp)
};

/// `chaosweep slurm`: options of the batch-script generator (see slurm/README.md).
struct SlurmOptions {
  std::string spec_path;
  int nodes = 1;
  int tasks_per_node = 1;
  std::string time;             // [D-]HH:MM:SS
  std::string partition;        // empty: the cluster's default
  std::string account;          // empty: the user's default
  int max_requeues = 10;        // requeues after a stop with a checkpoint (status 3)
  std::string launcher = "srun";  // srun (--mpi=pmix) or mpirun
  std::string site_file;        // slurm/sites/<site>.sh sourced by the script; may be empty
  std::string script;           // write the script here; empty: standard output
  int signal_margin = -1;       // seconds of warning before the time limit; -1: estimated
  int parts = 0;                // > 0: a job array of this many parts plus a merge job
};

int check_command(const CheckOptions& options);
int run_command(const RunOptions& options);  // needs MPI initialised
int summary_command(const SummaryOptions& options);
int slurm_command(const SlurmOptions& options);

/// `chaosweep merge ARCHIVE PART...`: the archive of a campaign run as several jobs, from
/// their part archives (see archive/part.hpp).
struct MergeOptions {
  std::string archive;
  std::vector<std::string> parts;
  bool overwrite = false;
  bool verbose = false;
};
int merge_command(const MergeOptions& options);  // needs MPI initialised

/// `chaosweep models`: models_reference() on standard output.
int models_command();
/// Every registered model's parameters, state variables and derived observables (Markdown).
std::string models_reference();

}  // namespace chaosweep::app
