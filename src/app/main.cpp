// chaosweep: command-line entry point. The one place that catches errors: every failure is
// printed as one line and mapped to the exit status of the command-line contract.
#include <CLI/CLI.hpp>

#include <cmath>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <malloc.h>

#include "app/commands.hpp"
#include "app/logging.hpp"
#include "results/table.hpp"
#include "core/error.hpp"
#include "core/version.hpp"
#include "parallel/communicator.hpp"

namespace {

using namespace chaosweep;

/// Runs a command that needs MPI; on failure prints one line and takes every rank down.
template <class Command>
int run_with_mpi(int argc, char** argv, Command&& command) {
  parallel::Session session(&argc, &argv);
  parallel::Communicator comm;
  try {
    return command();
  } catch (const Error& e) {
    app::print_error(e.what(), comm.rank(), comm.size());
    if (comm.size() > 1) comm.abort(e.exit_code());
    return e.exit_code();
  } catch (const std::exception& e) {
    app::print_error(e.what(), comm.rank(), comm.size());
    if (comm.size() > 1) comm.abort(kExitFailure);
    return kExitFailure;
  }
}

}  // namespace

int main(int argc, char** argv) {
  // A file-size limit then makes a write fail with EFBIG (reported as one error line) instead
  // of killing the process.
  std::signal(SIGXFSZ, SIG_IGN);
  // Batches and archive rows allocate and free buffers of megabytes again and again. By default
  // glibc returns such memory to the system at once (mmap for blocks above its threshold, heap
  // trimming), and every later allocation pays a page fault per 4 KiB: writing the member rows
  // of 2 x 1e6 members took 2.0 s instead of 0.6 s. Freed memory is kept for reuse instead:
  // blocks up to the largest threshold glibc allows come from the heap, which is not trimmed.
  mallopt(M_MMAP_THRESHOLD, 32 << 20);
  mallopt(M_TRIM_THRESHOLD, 1 << 30);
  // Open MPI offers two MPI-IO layers; its own (ompio, the default) wrote the archive's member
  // datasets here at a third of the rate of ROMIO (2 x 1e6 members: 0.77 s against 0.25 s,
  // docs/performance.md). Unless the user chose a layer, ROMIO goes first; setting a priority
  // of a component that is absent changes nothing, and other MPI libraries ignore these names.
  if (std::getenv("OMPI_MCA_io") == nullptr) {
    setenv("OMPI_MCA_io_romio321_priority", "50", 0);  // Open MPI 4 (0: keep a user's value)
    setenv("OMPI_MCA_io_romio341_priority", "50", 0);  // Open MPI 5
  }
  CLI::App cli{"chaosweep: forced-response ensemble campaigns for low-order chaotic models"};
  cli.set_version_flag("--version", kToolVersion);
  cli.require_subcommand(1);

  app::CheckOptions check;
  CLI::App* check_cmd = cli.add_subcommand("check", "Validate a campaign spec and print its plan and cost");
  check_cmd->add_option("SPEC", check.spec_path, "Campaign spec (YAML)")->required();
  check_cmd->add_option("--ranks", check.ranks, "Plan the share of work for this many MPI ranks")
      ->check(CLI::Range(1, 1 << 24));
  check_cmd->add_flag("!--no-calibrate", check.calibrate,
                      "Skip the short timing run used for the cost estimate");
  check_cmd->add_flag("--pilot", check.pilot,
                      "Also run a short pilot: dt adequacy, decorrelation times, members and "
                      "duration needed");
  const CLI::Validator positive(
      [](std::string& text) -> std::string {
        char* end = nullptr;
        const double v = std::strtod(text.c_str(), &end);
        if (end != text.c_str() && *end == '\0' && v > 0.0 && std::isfinite(v)) return "";
        return "must be a positive number, not `" + text + "`";
      },
      "POSITIVE");
  CLI::Option* pilot_opts[] = {
      check_cmd->add_option("--pilot-members", check.pilot_options.members,
                            "Members per pilot case (default 32)")
          ->check(CLI::Range(8, 1 << 20)),
      check_cmd->add_option("--pilot-duration", check.pilot_options.duration,
                            "Accumulated model time of the pilot (default: a tenth of the spec's)")
          ->check(positive),
      check_cmd->add_option("--target-halfwidth", check.pilot_options.target_halfwidth,
                            "Wanted 95% half-width of each case's ensemble mean: X for every "
                            "observable, or NAME=X,NAME=X (observable units)"),
      check_cmd->add_option("--target-slope-halfwidth", check.pilot_options.target_slope_halfwidth,
                            "Wanted 95% half-width of each response slope: X or NAME=X,...")};

  app::RunOptions run;
  CLI::App* run_cmd = cli.add_subcommand("run", "Run a campaign (under mpirun for several ranks)");
  run_cmd->add_option("SPEC", run.spec_path, "Campaign spec (YAML)")->required();
  run_cmd->add_option("--archive", run.archive, "Write the archive here instead of output.archive");
  run_cmd->add_flag("--overwrite", run.overwrite,
                    "Replace an existing archive; without --resume, also discard existing "
                    "checkpoints");
  run_cmd->add_flag("--resume", run.resume, "Continue from the campaign's checkpoints");
  run_cmd->add_flag("--restart-from-scratch", run.restart_from_scratch,
                    "With --resume: start over when no checkpoint can be used");
  run_cmd->add_option("--progress", run.progress, "Progress display: auto, bar, log or none")
      ->check(CLI::IsMember({"auto", "bar", "log", "none"}));
  run_cmd->add_option("--part", run.part,
                      "Run part I of N of the campaign (I/N) into a part archive, for "
                      "`chaosweep merge`");
  run_cmd->add_flag("-v,--verbose", run.verbose, "Log more detail");

  app::MergeOptions merge;
  CLI::App* merge_cmd = cli.add_subcommand(
      "merge", "Write the archive of a campaign run in parts (`run --part I/N`) from its parts");
  merge_cmd->add_option("ARCHIVE", merge.archive, "The campaign's archive to write")->required();
  merge_cmd->add_option("PART", merge.parts, "Every part archive, in any order")->required();
  merge_cmd->add_flag("--overwrite", merge.overwrite, "Replace an existing archive");
  merge_cmd->add_flag("-v,--verbose", merge.verbose, "Log more detail");

  app::SummaryOptions summary;
  CLI::App* summary_cmd = cli.add_subcommand("summary", "Print the response tables of an archive");
  summary_cmd->add_option("ARCHIVE", summary.archive, "Archive written by `chaosweep run`")->required();
  summary_cmd->add_option("--format", summary.format, "table, csv or json")
      ->check(CLI::IsMember({"table", "csv", "json"}));
  summary_cmd->add_flag("--no-verify", summary.no_verify,
                        "Read an archive whose checksum disagrees (edited after the run)");

  app::SlurmOptions slurm;
  CLI::App* slurm_cmd = cli.add_subcommand(
      "slurm", "Write a Slurm batch script that checkpoints, requeues and resumes the campaign");
  slurm_cmd->add_option("SPEC", slurm.spec_path, "Campaign spec (YAML)")->required();
  slurm_cmd->add_option("--nodes", slurm.nodes, "Nodes to ask for")
      ->required()->check(CLI::Range(1, 1 << 20));
  slurm_cmd->add_option("--tasks-per-node", slurm.tasks_per_node, "MPI ranks per node")
      ->required()->check(CLI::Range(1, 1 << 16));
  slurm_cmd->add_option("--time", slurm.time, "Time limit of each attempt, HH:MM:SS or D-HH:MM:SS")
      ->required();
  slurm_cmd->add_option("--partition", slurm.partition, "Slurm partition");
  slurm_cmd->add_option("--account", slurm.account, "Slurm account to charge");
  slurm_cmd->add_option("--max-requeues", slurm.max_requeues,
                        "Requeue at most this many times after a stop with a checkpoint")
      ->check(CLI::Range(0, 100000));
  slurm_cmd->add_option("--launcher", slurm.launcher, "srun (with --mpi=pmix) or mpirun")
      ->check(CLI::IsMember({"srun", "mpirun"}));
  slurm_cmd->add_option("--site", slurm.site_file, "Site settings to source first (modules, MPI), slurm/sites/<site>.sh");
  slurm_cmd->add_option("--script", slurm.script, "Write the batch script to this file (default: stdout)");
  slurm_cmd->add_option("--parts", slurm.parts,
                        "Run the campaign as a job array of this many parts (run --part I/N) "
                        "plus a merge job; needs --script")
      ->check(CLI::Range(1, 1 << 20));
  slurm_cmd->add_option("--signal-margin", slurm.signal_margin,
                        "Seconds between the warning signal and the time limit (default: estimated)");

  CLI::App* schema_cmd = cli.add_subcommand(
      "schema", "Print the archive's dataset and dimension tables (Markdown, or JSON)");
  bool schema_json = false;
  schema_cmd->add_flag("--json", schema_json,
                       "Print every declared result as JSON (path, dimensions, type, units, "
                       "long name, when present, how merged)");
  CLI::App* models_cmd = cli.add_subcommand(
      "models", "Print every model's parameters, defaults, state variables and observables "
                "(Markdown)");

  try {
    cli.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (e.get_exit_code() == 0) return cli.exit(e);  // --help, --version
    app::print_error(e.what());
    return kExitInvalid;
  }

  for (const CLI::Option* o : pilot_opts) check.pilot_options_given |= o->count() > 0;
  if (*run_cmd) return run_with_mpi(argc, argv, [&] { return app::run_command(run); });
  if (*merge_cmd) return run_with_mpi(argc, argv, [&] { return app::merge_command(merge); });
  try {
    if (*check_cmd) return app::check_command(check);
    if (*summary_cmd) return app::summary_command(summary);
    if (*slurm_cmd) return app::slurm_command(slurm);
    if (*models_cmd) return app::models_command();
    if (*schema_cmd) {
      std::fputs((schema_json ? results::json_table() : results::markdown_table()).c_str(), stdout);
      return kExitComplete;
    }
  } catch (const Error& e) {
    app::print_error(e.what());
    return e.exit_code();
  } catch (const std::exception& e) {
    app::print_error(e.what());
    return kExitFailure;
  }
  return kExitInvalid;
}
