// `chaosweep run`: spec -> plan -> this rank's batches -> reduction -> archive.
#include <spdlog/spdlog.h>
#include <unistd.h>

#include <chrono>
#include <ctime>
#include <filesystem>
#include <functional>
#include <map>
#include <memory>

#include "app/commands.hpp"
#include "app/logging.hpp"
#include "app/progress.hpp"
#include "archive/writer.hpp"
#include "core/error.hpp"
#include "parallel/communicator.hpp"
#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/load.hpp"

namespace chaosweep::app {
namespace {

namespace fs = std::filesystem;

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&now));
  return text;
}

/// Runs `step` on every rank; if it throws an Error on any rank, every rank returns the same
/// exit status and the first failing rank (rank 0 preferred) prints its one-line message.
/// Used for the checks that precede any work, where all ranks fail alike and no abort is needed.
int agree(const parallel::Communicator& comm, const std::function<void()>& step) {
  int code = 0;
  std::string message;
  try {
    step();
  } catch (const Error& e) {
    code = e.exit_code();
    message = e.what();
  }
  if (!comm.any(code != 0)) return 0;
  const bool root_failed = comm.broadcast(code != 0 ? "1" : "0") == "1";
  if (code != 0 && (comm.rank() == 0 || !root_failed)) print_error(message, comm.rank(), 0);
  return static_cast<int>(comm.max(code != 0 ? code : 0));
}

/// The archive path the run writes, checked before any work: its directory must exist and be
/// writable, and an existing archive is replaced only with --overwrite.
std::string checked_archive_path(const spec::Spec& spec, const RunOptions& options) {
  const bool from_spec = options.archive.empty();
  const std::string path = from_spec ? spec.output.archive : options.archive;
  const std::string where =
      from_spec ? spec.source_path + ":" + std::to_string(spec.output.archive_where.line) + ":" +
                      std::to_string(spec.output.archive_where.column) + ": output.archive: "
                : "--archive: ";
  fs::path dir = fs::path(path).parent_path();
  if (dir.empty()) dir = ".";
  std::error_code ec;
  if (!fs::is_directory(dir, ec)) {
    throw UsageError(where + "directory `" + dir.string() + "` does not exist");
  }
  if (access(dir.c_str(), W_OK) != 0) {
    throw UsageError(where + "directory `" + dir.string() + "` is not writable");
  }
  if (fs::is_directory(path, ec)) throw UsageError(where + "`" + path + "` is a directory");
  if (fs::exists(path, ec) && !options.overwrite) {
    throw UsageError(where + "archive `" + path + "` exists; pass --overwrite to replace it");
  }
  return path;
}

/// Integrates this rank's share of batches, in batch order.
std::vector<run::BatchResult> run_share(const spec::Spec& spec, const plan::Plan& plan,
                                        plan::Range share, Progress& progress) {
  std::vector<run::BatchResult> results;
  results.reserve(static_cast<std::size_t>(share.last - share.first));
  std::unique_ptr<run::CaseRunner> runner;
  std::int64_t runner_case = -1;
  for (std::int64_t b = share.first; b < share.last; ++b) {
    const plan::Batch& batch = plan.batches[static_cast<std::size_t>(b)];
    if (batch.case_index != runner_case) {
      runner = std::make_unique<run::CaseRunner>(
          spec, plan, plan.cases[static_cast<std::size_t>(batch.case_index)]);
      runner_case = batch.case_index;
    }
    results.push_back(runner->run(batch));
    progress.advance(b - share.first + 1);
  }
  progress.finish();
  return results;
}

void log_plan(const spec::Spec& spec, const plan::Plan& plan, int ranks) {
  spdlog::info("campaign `{}`: model {}, {} cases x {} members, {} batches of {} on {} ranks",
               spec.name, spec.model, plan.cases.size(), plan.members, plan.batches.size(),
               plan.batch_size, ranks);
}

}  // namespace

int run_command(const RunOptions& options) {
  const parallel::Communicator comm;
  setup_logging(comm.rank(), comm.size(), options.verbose);
  const auto start = std::chrono::steady_clock::now();

  spec::Spec spec;
  std::string archive_path;
  const ProgressMode mode = parse_progress_mode(options.progress);
  if (int code = agree(comm, [&] { spec = spec::load_spec(options.spec_path); })) return code;
  if (int code = agree(comm, [&] { archive_path = checked_archive_path(spec, options); })) {
    return code;
  }

  const plan::Plan plan = plan::make_plan(spec);
  if (comm.rank() == 0) log_plan(spec, plan, comm.size());
  const plan::Range share = plan::share(static_cast<std::int64_t>(plan.batches.size()),
                                        comm.rank(), comm.size());
  Progress progress(mode, comm.rank() == 0, share.last - share.first,
                    static_cast<double>(plan.batch_size) * plan.total_steps(), comm.size());
  const std::vector<run::BatchResult> local = run_share(spec, plan, share, progress);

  const parallel::EnsembleResults ensemble = parallel::reduce(comm, spec, plan, local);
  if (ensemble.non_finite_members > 0 && comm.rank() == 0) {
    spdlog::warn("{} of {} members became non-finite (dt too large?); they are excluded from every "
                 "estimate and marked in /member/status",
                 ensemble.non_finite_members, plan.member_count());
  }
  const auto integrated = std::chrono::steady_clock::now();

  archive::RunInfo info;
  info.ranks = comm.size();
  info.rank = comm.rank();
  info.created_utc = comm.broadcast(utc_now());
  archive::write_archive(archive_path, spec, plan, local, ensemble, info);

  if (comm.rank() == 0) {
    const auto end = std::chrono::steady_clock::now();
    const double run_s = std::chrono::duration<double>(integrated - start).count();
    const double write_s = std::chrono::duration<double>(end - integrated).count();
    const double member_steps = static_cast<double>(plan.member_count()) * plan.total_steps();
    spdlog::info("integrated {:.3g} member-steps in {:.2f} s ({:.3g} member-steps/s on {} ranks)",
                 member_steps, run_s, member_steps / run_s, comm.size());
    spdlog::info("archive {} written in {:.2f} s", archive_path, write_s);
  }
  return kExitComplete;
}

}  // namespace chaosweep::app
