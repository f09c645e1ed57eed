// `chaosweep run`: spec -> plan -> this rank's batches in collective rounds (progress, stop
// agreement, checkpoints) -> reduction -> archive.
#include <spdlog/spdlog.h>
#include <sys/resource.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <functional>
#include <memory>
#include <sstream>

#include "app/collective.hpp"
#include "app/commands.hpp"
#include "app/local_work.hpp"
#include "app/logging.hpp"
#include "app/progress.hpp"
#include "app/resume_index.hpp"
#include "app/signals.hpp"
#include "app/test_hooks.hpp"
#include "archive/part.hpp"
#include "archive/reader.hpp"
#include "archive/writer.hpp"
#include "checkpoint/store.hpp"
#include "core/error.hpp"
#include "parallel/communicator.hpp"
#include "parallel/merge_batches.hpp"
#include "parallel/reduce.hpp"
#include "plan/member_output.hpp"
#include "plan/plan.hpp"
#include "spec/load.hpp"

namespace chaosweep::app {
namespace {

namespace fs = std::filesystem;
using Clock = std::chrono::steady_clock;

/// Wall time of one round of work between two collective agreements (bounds how long a stop
/// signal waits).
constexpr double kRoundSeconds = 0.5;

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

std::string spec_where(const spec::Spec& spec, spec::Location at, const std::string& key) {
  return spec.source_path + ":" + std::to_string(at.line) + ":" + std::to_string(at.column) +
         ": " + key + ": ";
}

/// Which part of the campaign a run covers (`--part I/N`); count 0: the whole campaign.
struct PartChoice {
  int index = 0, count = 0;
  bool whole() const { return count == 0; }
  std::string tag() const { return fmt::format("part-{}-of-{}", index, count); }
};

PartChoice parse_part(const std::string& text) {
  if (text.empty()) return {};
  const std::size_t slash = text.find('/');
  const auto number = [](const std::string& digits) {
    if (digits.empty() || digits.size() > 7 ||
        digits.find_first_not_of("0123456789") != std::string::npos) {
      return -1;
    }
    return std::stoi(digits);
  };
  const int i = slash == std::string::npos ? -1 : number(text.substr(0, slash));
  const int n = slash == std::string::npos ? -1 : number(text.substr(slash + 1));
  if (i < 1 || n < 1 || i > n) {
    throw UsageError("--part: `" + text + "` is not I/N with 1 <= I <= N (part I of N, e.g. 2/8)");
  }
  return PartChoice{i, n};
}

/// Where part I of N goes by default: beside the archive, `NAME.part-I-of-N.EXT`.
std::string default_part_path(const std::string& archive, const PartChoice& part) {
  const fs::path p(archive);
  return (p.parent_path() / (p.stem().string() + "." + part.tag() + p.extension().string()))
      .string();
}

/// The archive path the run writes, checked before any work: its directory must exist and be
/// writable, and an existing archive is replaced only with --overwrite (with --resume the
/// caller first checks whether it is this campaign's complete archive).
std::string checked_archive_path(const spec::Spec& spec, const RunOptions& options,
                                 const PartChoice& part, std::string& exists_error) {
  const bool from_spec = options.archive.empty();
  std::string path = from_spec ? spec.output.archive : options.archive;
  if (from_spec && !part.whole()) path = default_part_path(path, part);
  const std::string where =
      from_spec ? spec_where(spec, spec.output.archive_where, "output.archive") : "--archive: ";
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
  exists_error.clear();
  if (fs::exists(path, ec) && !options.overwrite) {
    exists_error = where + (part.whole() ? "archive `" : "part archive `") + path +
                   "` exists; pass --overwrite to replace it";
    if (!options.resume) throw UsageError(exists_error);
  }
  return path;
}

/// The run's checkpoints: beside its archive (or part archive), or in checkpoint.directory,
/// where each part has its own subdirectory.
std::string checkpoint_directory(const spec::Spec& spec, const std::string& archive_path,
                                 const PartChoice& part) {
  if (spec.checkpoint.directory.empty()) return archive_path + ".checkpoints";
  if (part.whole()) return spec.checkpoint.directory;
  return (fs::path(spec.checkpoint.directory) / part.tag()).string();
}

/// "line N: `old` is now `new`" for the first line where two spec texts differ.
std::string first_difference(const std::string& before, const std::string& now) {
  std::istringstream a(before), b(now);
  std::string la, lb;
  for (int line = 1;; ++line) {
    const bool ha = static_cast<bool>(std::getline(a, la));
    const bool hb = static_cast<bool>(std::getline(b, lb));
    if (!ha && !hb) return "only whitespace at the ends of lines differs";
    if (!ha) return "line " + std::to_string(line) + " was added: `" + lb + "`";
    if (!hb) return "line " + std::to_string(line) + " was removed: `" + la + "`";
    if (la != lb) return "line " + std::to_string(line) + ": `" + la + "` is now `" + lb + "`";
  }
}

/// Checks the checkpoint directory against --resume and --overwrite before any work. Returns
/// true when the checkpoints there are to be discarded (--overwrite without --resume), which
/// happens only once every check before the run has passed.
bool check_checkpoints(const spec::Spec& spec, const RunOptions& options,
                       const checkpoint::Store& store) {
  const std::string dir = store.directory();
  if (!options.resume) {
    if (store.has_content() && options.overwrite) return true;
    if (store.has_content()) {
      throw UsageError("checkpoints of an earlier run exist in " + dir +
                       "; pass --resume to continue it, or --overwrite to discard them and start "
                       "over");
    }
    return false;
  }
  if (!store.has_content()) {
    if (options.restart_from_scratch) return false;
    throw UsageError("--resume: no checkpoint in " + dir +
                     "; pass --restart-from-scratch to start the campaign from the beginning");
  }
  if (store.holds_older_format()) {
    throw UsageError("--resume: " + dir + " holds checkpoints of an older format (one file per "
                     "finished batch); finish that run with the chaosweep that wrote it, or pass "
                     "--overwrite without --resume to discard them");
  }
  const std::string stored = store.stored_spec();
  if (!stored.empty() && stored != spec.text) {
    throw UsageError("--resume: the checkpoints in " + dir + " were written for another version of " +
                     spec.source_path + " (" + first_difference(stored, spec.text) +
                     "); restore that spec, or pass --overwrite without --resume to discard them");
  }
  return false;
}

/// A campaign whose archive is already complete: `--resume` of a job requeued after it
/// finished, or killed between sealing the archive and removing its checkpoints. The archive
/// must be sealed, complete and made from this very spec.
bool already_complete(const spec::Spec& spec, const std::string& archive_path,
                      const RunOptions& options, const PartChoice& part) {
  std::error_code ec;
  if (!options.resume || options.overwrite || !fs::exists(archive_path, ec)) return false;
  if (!part.whole()) {  // the same part of this very spec
    try {
      const archive::PartIdentity id = archive::read_part_identity(archive_path);
      return id.spec_sha256 == spec.sha256 && id.part.index == part.index &&
             id.part.count == part.count;
    } catch (const Error&) {
      return false;
    }
  }
  try {
    const archive::ArchiveSummary s = archive::read_summary(archive_path);
    return s.status == "complete" && s.spec_sha256 == spec.sha256;
  } catch (const Error&) {
    return false;
  }
}

/// Writes one checkpoint generation collectively: every rank saves its batch in progress,
/// then rank 0 commits the generation (manifest, rename, pruning).
void write_generation(const parallel::Communicator& comm, const checkpoint::Store& store,
                      const LocalWork& work, std::int64_t generation, int keep) {
  const Clock::time_point start = Clock::now();
  store.begin_generation(generation);
  store.sync_done();
  const std::int64_t mine = work.save_in_progress(generation);
  test_hooks::checkpoint_delay();
  std::vector<std::int64_t> batches;
  for (std::int64_t b : comm.allgather_in_rank_order(std::vector<std::int64_t>{mine})) {
    if (b >= 0) batches.push_back(b);
  }
  std::string failure;
  if (comm.rank() == 0) {
    try {
      store.commit_generation(generation, batches, keep);
    } catch (const Error& e) {
      failure = e.what();
    }
  }
  failure = comm.broadcast(failure);
  if (!failure.empty()) throw IoError(failure);
  if (comm.rank() == 0) {
    spdlog::info("checkpoint generation {}: {} batches in progress saved in {:.3f} s", generation,
                 batches.size(), seconds_since(start));
  }
}

/// Collective rounds of work until every rank is done (returns false) or a stop is agreed
/// (returns true, after every rank that received a signal has logged which one and from whom,
/// and a checkpoint generation has been saved).
bool run_rounds(const parallel::Communicator& comm, const spec::Spec& spec,
                const checkpoint::Store& store, LocalWork& work, Progress& progress,
                std::int64_t generation) {
  Clock::time_point last_checkpoint = Clock::now();
  const double round_seconds = test_hooks::round_seconds(kRoundSeconds);
  bool done = work.done();
  for (long round = 1;; ++round) {
    if (!done) done = work.work(round_seconds);
    store.flush_done();  // the round's finished batches, written together
    test_hooks::maybe_stop(comm.rank(), round);
    test_hooks::maybe_throw(comm.rank(), round);
    test_hooks::round_delay();
    progress.advance(work.finished_count());
    const bool due = comm.rank() == 0 &&
                     seconds_since(last_checkpoint) >= spec.checkpoint.every_seconds;
    const parallel::Communicator::RoundAgreement a = comm.agree(stop_signal() != 0, due, done);
    if (a.all_done) return false;
    if (a.stop && stop_signal() != 0) spdlog::warn("received {}", describe_stop_signal());
    if (a.checkpoint || a.stop) {
      write_generation(comm, store, work, generation++, spec.checkpoint.keep);
      last_checkpoint = Clock::now();
    }
    if (a.stop) return true;
  }
}

/// Checkpoint files created by all ranks, the bytes written and the share of the run they
/// cost; logged whenever the run completes, with no file written too.
void log_checkpoint_cost(const parallel::Communicator& comm, const checkpoint::Store& store,
                         double run_seconds) {
  const checkpoint::Store::WriteStats& w = store.write_stats();
  const std::int64_t files = comm.sum(w.files);
  const std::int64_t bytes = comm.sum(static_cast<std::int64_t>(w.bytes));
  const double slowest = comm.max(w.seconds);
  if (comm.rank() == 0) {
    spdlog::info("checkpoints: {} files, {:.2f} MiB, {:.2f} s on the slowest rank ({:.1f}% of "
                 "the run)", files, bytes / 1048576.0, slowest, 100.0 * slowest / run_seconds);
  }
}

void log_plan(const spec::Spec& spec, const plan::Plan& plan, int ranks,
              const archive::PartRange& range, bool whole) {
  const std::string head =
      fmt::format("campaign `{}`: model {}, {} cases x {} members, {} batches of {}", spec.name,
                  spec.model, plan.cases.size(), plan.members, plan.batch_count(), plan.batch_size);
  if (whole) {
    spdlog::info("{} on {} ranks", head, ranks);
  } else {
    spdlog::info("{}; part {} of {}: batches {} to {} ({} of them) on {} ranks", head, range.index,
                 range.count, range.first_batch, range.end_batch - 1,
                 range.end_batch - range.first_batch, ranks);
  }
}

/// Members in the batches [0, b) of the plan.
std::int64_t members_before(const plan::Plan& plan, std::int64_t b) {
  const std::int64_t p = plan.batches_per_case();
  if (p <= 0) return 0;
  return b / p * plan.members + std::min<std::int64_t>(b % p * plan.batch_size, plan.members);
}

/// Restores checkpointed batches on every rank and applies --restart-from-scratch. The ranks
/// share out the reading of the segments (app/resume_index.hpp); rank 0 reports the damage
/// of them all, gathered there.
std::int64_t restore(const parallel::Communicator& comm, const RunOptions& options,
                     const checkpoint::Store& store, LocalWork& work, plan::Range run) {
  const Clock::time_point start = Clock::now();
  checkpoint::DoneIndex index = distributed_index(comm, store, run);
  const double index_seconds = comm.max(seconds_since(start));
  const LocalWork::Restored r = work.restore(std::move(index));
  if (comm.rank() == 0) {
    for (const std::string& path : r.cut_short) {
      spdlog::info("{}: its last record was cut short (a write interrupted); ignored", path);
    }
    for (const std::string& problem : r.segment_problems) {
      spdlog::warn("{}; the batches there will be recomputed", problem);
    }
  }
  const std::int64_t finished = comm.sum(r.finished), running = comm.sum(r.in_progress);
  const std::int64_t problems =
      comm.sum(r.problems + static_cast<std::int64_t>(r.segment_problems.size()));
  if (finished + running == 0 && problems > 0 && !options.restart_from_scratch) {
    throw UsageError("--resume: no usable checkpoint in " + store.directory() + " (" +
                     std::to_string(problems) +
                     " damaged checkpoints); pass --restart-from-scratch to start over");
  }
  if (comm.rank() == 0) {
    spdlog::info("resuming from {}: {} batches finished, {} in progress, {} damaged checkpoints "
                 "skipped (those batches are recomputed); read in {:.2f} s (the index of finished "
                 "batches {:.2f} s)",
                 store.directory(), finished, running, problems, seconds_since(start),
                 index_seconds);
  }
  std::int64_t newest = 0;
  for (std::int64_t g : store.generations()) newest = std::max(newest, g);
  return static_cast<std::int64_t>(comm.max(static_cast<double>(newest))) + 1;
}

/// A word of a shell command line, quoted when the shell would split or expand it.
std::string shell_word(const std::string& word) {
  if (!word.empty() && word.find_first_not_of("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                              "0123456789_-./=:,+@%") == std::string::npos) {
    return word;
  }
  std::string quoted = "'";
  for (char c : word) quoted += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return quoted + "'";
}

/// The command that continues this run: its spec, --archive and --overwrite, on as many ranks
/// (any number would do; the same is the one to copy without thinking).
std::string resume_command(const RunOptions& options, int ranks) {
  std::string command = ranks > 1 ? "mpirun -np " + std::to_string(ranks) + " " : "";
  command += "chaosweep run " + shell_word(options.spec_path);
  if (!options.part.empty()) command += " --part " + shell_word(options.part);
  if (!options.archive.empty()) command += " --archive " + shell_word(options.archive);
  if (options.overwrite) command += " --overwrite";
  return command + " --resume";
}

/// Removes the checkpoint directory of a run that failed before it saved anything worth
/// keeping (no finished batch, no generation), when this run created it. Called by a failing
/// rank on its way to the one-line error; returns whether it removed the directory.
bool discard_unsaved(const checkpoint::Store& store, bool created_here) noexcept {
  if (!created_here) return false;
  try {
    return store.remove_if_nothing_saved();
  } catch (...) {
    return false;
  }
}

/// Peak resident memory of the ranks (getrusage), logged by rank 0: the largest with its rank,
/// and the mean.
void log_peak_memory(const parallel::Communicator& comm) {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  const double mib = static_cast<double>(usage.ru_maxrss) / 1024.0;  // ru_maxrss is in KiB
  const double largest = comm.max(mib);
  const int holder = -static_cast<int>(comm.max(mib == largest ? -comm.rank() : -comm.size()));
  const double mean =
      static_cast<double>(comm.sum(static_cast<std::int64_t>(usage.ru_maxrss))) / 1024.0 /
      comm.size();
  if (comm.rank() == 0) {
    spdlog::info("peak memory per rank: {:.1f} MiB at most (rank {}), {:.1f} MiB on average",
                 largest, holder, mean);
  }
}

/// The integration rate of this run: only the member-steps integrated by this process count,
/// not the batches read back from checkpoints.
void log_rate(const parallel::Communicator& comm, const plan::Plan& plan, const LocalWork& work,
              const archive::PartRange& range, double seconds) {
  const std::int64_t integrated = comm.sum(work.integrated_member_steps());
  if (comm.rank() != 0) return;
  const std::int64_t campaign =
      (members_before(plan, range.end_batch) - members_before(plan, range.first_batch)) *
      plan.total_steps();
  std::string restored;
  if (integrated < campaign) {
    restored = fmt::format("; the other {} of the campaign's {} were read back from checkpoints",
                           campaign - integrated, campaign);
  }
  spdlog::info("integrated {} member-steps in {:.2f} s ({:.3g} member-steps/s on {} ranks){}",
               integrated, seconds, integrated / seconds, comm.size(), restored);
}

/// The end of a `--part` run: the part's node lists and counts joined over its ranks and its
/// rows written into the part archive, for `chaosweep merge`.
int finish_part(const parallel::Communicator& comm, const RunOptions& options,
                const spec::Spec& spec, const plan::Plan& plan, const archive::PartRange& range,
                const std::vector<run::BatchResult>& local, const LocalWork& work,
                const checkpoint::Store& store, const std::string& path,
                Clock::time_point start) {
  const parallel::PartialCases joined = parallel::join_ranks(comm, work.partial());
  const Clock::time_point integrated = Clock::now();
  archive::RunInfo info;
  info.ranks = comm.size();
  info.rank = comm.rank();
  info.created_utc = comm.broadcast(utc_now());
  archive::write_part(path, spec, plan, range, local, joined.nodes, joined.counts, info);
  comm.barrier();
  if (comm.rank() == 0) store.remove_all();
  log_rate(comm, plan, work, range, std::chrono::duration<double>(integrated - start).count());
  if (comm.rank() == 0) {
    spdlog::info("part archive {} written in {:.2f} s", path, seconds_since(integrated));
    // with the default names the parts are one shell pattern (when the path needs no quotes)
    std::string parts = "PART...";
    if (options.archive.empty()) {
      const std::string first = default_part_path(spec.output.archive, PartChoice{1, range.count});
      const std::size_t at = first.rfind(".part-1-of-");
      if (at != std::string::npos && shell_word(first) == first) {
        parts = first.substr(0, at) + ".part-*-of-" + first.substr(at + 11);
      }
    }
    spdlog::info("part {} of {} is complete; when all {} are, write the archive with: chaosweep "
                 "merge {} {}",
                 range.index, range.count, range.count,
                 shell_word(options.archive.empty() ? spec.output.archive : "ARCHIVE"), parts);
  }
  log_peak_memory(comm);
  return kExitComplete;
}

}  // namespace

int run_command(const RunOptions& options) {
  const parallel::Communicator comm;
  setup_logging(comm.rank(), comm.size(), options.verbose);
  install_stop_handlers();
  const Clock::time_point start = Clock::now();

  spec::Spec spec;
  std::string archive_path;
  std::unique_ptr<checkpoint::Store> store;
  bool complete = false, discard = false;
  PartChoice part;
  const ProgressMode mode = parse_progress_mode(options.progress);
  if (int code = agree(comm, [&] {
        part = parse_part(options.part);
        spec = spec::load_spec(options.spec_path);
        const plan::Plan plan = plan::make_plan(spec);
        plan::check_member_output(spec, plan);
        if (part.count > plan.batch_count()) {
          throw UsageError(fmt::format("--part: {} parts, but the campaign has only {} batches; "
                                       "use at most {} parts", part.count, plan.batch_count(),
                                       plan.batch_count()));
        }
      })) {
    return code;
  }
  if (int code = agree(comm, [&] {
        std::string exists_error;
        archive_path = checked_archive_path(spec, options, part, exists_error);
        store = std::make_unique<checkpoint::Store>(
            checkpoint_directory(spec, archive_path, part), spec.sha256, comm.rank());
        complete = already_complete(spec, archive_path, options, part);
        if (!complete && !exists_error.empty()) throw UsageError(exists_error);
        if (!complete) discard = check_checkpoints(spec, options, *store);
      })) {
    return code;
  }
  if (complete) {
    if (comm.rank() == 0) {
      // checkpoints of this very spec are leftovers of the finished run; another spec's stay
      const std::string stored = store->has_content() ? store->stored_spec() : std::string();
      const bool leftovers = store->has_content() && (stored.empty() || stored == spec.text);
      if (leftovers) store->remove_all();
      spdlog::info("the {} is complete: {} {} holds its results{}; nothing to do",
                   part.whole() ? "campaign" : "part " + std::to_string(part.index) + " of " +
                                                   std::to_string(part.count),
                   part.whole() ? "archive" : "part archive", archive_path,
                   leftovers ? " (its leftover checkpoints were removed)" : "");
    }
    return kExitComplete;
  }

  const plan::Plan plan = plan::make_plan(spec);
  const archive::PartRange range = part.whole()
                                       ? archive::PartRange{1, 1, 0, plan.batch_count()}
                                       : archive::part_range(plan, part.index, part.count);
  if (comm.rank() == 0) log_plan(spec, plan, comm.size(), range, part.whole());
  const plan::Range mine =
      plan::share(range.end_batch - range.first_batch, comm.rank(), comm.size());
  const plan::Range share{range.first_batch + mine.first, range.first_batch + mine.last};
  const plan::Range share_of_run{range.first_batch, range.end_batch};
  LocalWork work(spec, plan, share, store.get());
  std::int64_t generation = 1;
  const bool resuming = options.resume && store->has_content();
  if (resuming) {
    if (int code = agree(comm, [&] { generation = restore(comm, options, *store, work, share_of_run); })) {
      return code;
    }
  }
  // Every spin-up to the attractor this rank needs, before any file is created or discarded.
  if (int code = agree(comm, [&] { work.prepare_cases(); })) return code;

  if (discard && comm.rank() == 0) {
    spdlog::warn("--overwrite: discarding the checkpoints of an earlier run in {}",
                 store->directory());
    store->remove_all();
  }
  if (comm.rank() == 0) {
    store->remove_leftovers();
    store->initialise(spec.text);
  }
  comm.barrier();

  try {
    Progress progress(mode, comm.rank() == 0, work.batch_count(),
                      static_cast<double>(plan.batch_size) * plan.total_steps(), comm.size(),
                      work.finished_count());
    const bool stopped = run_rounds(comm, spec, *store, work, progress, generation);
    progress.finish();
    if (stopped) {
      if (comm.rank() == 0) {
        spdlog::warn("stopped with a checkpoint in {}; continue with: {}", store->directory(),
                     resume_command(options, comm.size()));
      }
      return kExitStopped;
    }

    store->flush_done();  // every finished batch on disk before the archive is written
    log_checkpoint_cost(comm, *store, seconds_since(start));
    const std::vector<run::BatchResult> local = work.take_results();
    if (!part.whole()) return finish_part(comm, options, spec, plan, range, local, work, *store,
                                          archive_path, start);
    const parallel::EnsembleResults ensemble = parallel::reduce(comm, spec, plan, work.partial());
    if (ensemble.non_finite_members > 0 && comm.rank() == 0) {
      spdlog::warn("{} of {} members became non-finite (dt too large?); they are excluded from "
                   "every estimate and marked in /member/status",
                   ensemble.non_finite_members, plan.member_count());
    }
    if (comm.rank() == 0) warn_about_estimates(spec, plan, ensemble);
    const Clock::time_point integrated = Clock::now();

    archive::RunInfo info;
    info.ranks = comm.size();
    info.rank = comm.rank();
    info.created_utc = comm.broadcast(utc_now());
    archive::write_archive(archive_path, spec, plan, local, ensemble, info);
    comm.barrier();
    if (comm.rank() == 0) store->remove_all();

    log_rate(comm, plan, work, range, std::chrono::duration<double>(integrated - start).count());
    if (comm.rank() == 0) {
      spdlog::info("archive {} written in {:.2f} s", archive_path, seconds_since(integrated));
    }
    log_peak_memory(comm);
    return report_empty_cases(comm, spec, plan, ensemble);
  } catch (const Error& e) {
    if (!discard_unsaved(*store, !resuming)) throw;
    throw Error(std::string(e.what()) + " (no batch had finished; " + store->directory() +
                    " was removed)",
                e.exit_code());
  } catch (...) {
    discard_unsaved(*store, !resuming);
    throw;
  }
}

}  // namespace chaosweep::app
