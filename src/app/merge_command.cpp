// `chaosweep merge ARCHIVE PART...`: the archive of a campaign run as several jobs
// (`run --part I/N`), from their part archives given in any order. The parts are checked
// (sealed, of one spec, each once, none missing), their merge-tree node lists joined in part
// order and their rows written where one job would have written them: every dataset is
// bitwise the one a single job writes.
#include <spdlog/spdlog.h>

#include <algorithm>
#include <chrono>
#include <filesystem>
#include <map>

#include "app/collective.hpp"
#include "app/commands.hpp"
#include "app/logging.hpp"
#include "archive/part.hpp"
#include "archive/writer.hpp"
#include "core/error.hpp"
#include "parallel/communicator.hpp"
#include "parallel/merge_batches.hpp"
#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "spec/load.hpp"

namespace chaosweep::app {

namespace {

namespace fs = std::filesystem;
using Clock = std::chrono::steady_clock;

/// The output path: its directory exists and is writable, it is none of the parts, and an
/// existing file is replaced only with --overwrite.
void check_output(const MergeOptions& options) {
  const std::string& path = options.archive;
  fs::path dir = fs::path(path).parent_path();
  if (dir.empty()) dir = ".";
  std::error_code ec;
  if (!fs::is_directory(dir, ec)) {
    throw UsageError("merge: directory `" + dir.string() + "` of " + path + " does not exist");
  }
  if (fs::is_directory(path, ec)) throw UsageError("merge: `" + path + "` is a directory");
  for (const std::string& part : options.parts) {
    if (fs::exists(part, ec) && fs::exists(path, ec) && fs::equivalent(part, path, ec)) {
      throw UsageError("merge: " + path + " is also given as a part; write the archive elsewhere");
    }
  }
  if (fs::exists(path, ec) && !options.overwrite) {
    throw UsageError("merge: archive `" + path + "` exists; pass --overwrite to replace it");
  }
}

/// The parts in part order, after every check: each is a sealed part archive (the seals are
/// verified by the ranks in turn), all of one spec and one part count, each part once and
/// none missing. Throws UsageError naming the offending part.
std::vector<archive::PartIdentity> checked_parts(const parallel::Communicator& comm,
                                                 const MergeOptions& options) {
  std::vector<archive::PartIdentity> ids;
  for (std::size_t k = 0; k < options.parts.size(); ++k) {
    const bool verify = static_cast<int>(k % static_cast<std::size_t>(comm.size())) == comm.rank();
    ids.push_back(archive::read_part_identity(options.parts[k], verify));
  }
  const archive::PartIdentity& first = ids.front();
  std::map<int, const archive::PartIdentity*> by_index;
  for (const archive::PartIdentity& id : ids) {
    if (id.spec_sha256 != first.spec_sha256) {
      throw UsageError(id.path + ": part of another campaign spec than " + first.path +
                       " (spec sha256 " + id.spec_sha256.substr(0, 12) + " vs " +
                       first.spec_sha256.substr(0, 12) + ")");
    }
    if (id.part.count != first.part.count) {
      throw UsageError(id.path + ": part " + std::to_string(id.part.index) + " of " +
                       std::to_string(id.part.count) + ", but " + first.path + " is part " +
                       std::to_string(first.part.index) + " of " +
                       std::to_string(first.part.count));
    }
    if (id.tool_version != first.tool_version) {
      throw UsageError(id.path + ": written by chaosweep " + id.tool_version + ", " + first.path +
                       " by " + first.tool_version + "; run every part with one version");
    }
    const auto [at, fresh] = by_index.emplace(id.part.index, &id);
    if (!fresh) {
      throw UsageError(id.path + ": part " + std::to_string(id.part.index) + " of " +
                       std::to_string(id.part.count) + " is given twice (also " +
                       at->second->path + ")");
    }
  }
  for (int i = 1; i <= first.part.count; ++i) {
    if (by_index.count(i) == 0) {
      throw UsageError("merge: part " + std::to_string(i) + " of " +
                       std::to_string(first.part.count) + " is missing (given " +
                       std::to_string(ids.size()) + " of " + std::to_string(first.part.count) +
                       ")");
    }
  }
  std::vector<archive::PartIdentity> ordered;
  for (const auto& entry : by_index) ordered.push_back(*entry.second);
  return ordered;
}

}  // namespace

int merge_command(const MergeOptions& options) {
  const parallel::Communicator comm;
  setup_logging(comm.rank(), comm.size(), options.verbose);
  const Clock::time_point start = Clock::now();

  std::vector<archive::PartIdentity> parts;
  spec::Spec spec;
  std::unique_ptr<plan::Plan> plan;
  if (int code = agree(comm, [&]() {
        check_output(options);
        parts = checked_parts(comm, options);
      })) {
    return code;
  }
  if (int code = agree(comm, [&]() {
        const archive::PartIdentity& first = parts.front();
        spec = spec::parse_spec(first.spec_yaml, first.path + " (its spec)");
        plan = std::make_unique<plan::Plan>(plan::make_plan(spec));
        for (const archive::PartIdentity& id : parts) {
          const archive::PartRange expected = archive::part_range(*plan, id.part.index, id.part.count);
          if (id.part.first_batch != expected.first_batch || id.part.end_batch != expected.end_batch) {
            throw UsageError(id.path + ": part archive is inconsistent (it holds batches " +
                             std::to_string(id.part.first_batch) + " to " +
                             std::to_string(id.part.end_batch - 1) + ", part " +
                             std::to_string(id.part.index) + " of " +
                             std::to_string(id.part.count) + " of its spec is batches " +
                             std::to_string(expected.first_batch) + " to " +
                             std::to_string(expected.end_batch - 1) + ")");
          }
        }
      })) {
    return code;
  }
  if (comm.rank() == 0) {
    std::int64_t ranks = 0;
    for (const archive::PartIdentity& id : parts) ranks += id.ranks;
    spdlog::info("merging {} parts of campaign `{}` ({} cases x {} members, {} batches; run on "
                 "{} ranks in all) into {}",
                 parts.size(), spec.name, plan->cases.size(), plan->members, plan->batch_count(),
                 ranks, options.archive);
  }

  // The node lists joined in part order, from the right (any grouping gives the same bits).
  const parallel::SummaryParts summary_parts = parallel::summary_parts(spec, *plan);
  const stats::MergeTree tree = parallel::campaign_tree(*plan, summary_parts);
  parallel::PartialCases joined;
  std::vector<run::BatchResult> local;
  const plan::Range mine = plan::share(static_cast<std::int64_t>(parts.size()), comm.rank(), comm.size());
  parallel::EnsembleResults ensemble;
  if (int code = agree(comm, [&]() {
        const std::size_t count_size = plan->cases.size() * summary_parts.count_width;
        for (std::size_t k = parts.size(); k-- > 0;) {
          parallel::PartialCases part;
          archive::read_part_partial(parts[k].path, tree.packed_size(), count_size, part.nodes,
                                     part.counts);
          if (k + 1 == parts.size()) {
            joined = std::move(part);
          } else {
            parallel::join_runs(tree, part, joined);
          }
        }
        ensemble = parallel::reduce(spec, *plan, parallel::finish_cases(tree, summary_parts, joined));
        // this rank's share of the parts' rows, for the collective write
        for (std::int64_t k = mine.first; k < mine.last; ++k) {
          const archive::PartIdentity& id = parts[static_cast<std::size_t>(k)];
          std::vector<run::BatchResult> rows = archive::read_part_rows(id.path, *plan, id.part);
          std::move(rows.begin(), rows.end(), std::back_inserter(local));
        }
      })) {
    return code;
  }
  if (ensemble.non_finite_members > 0 && comm.rank() == 0) {
    spdlog::warn("{} of {} members became non-finite (dt too large?); they are excluded from "
                 "every estimate and marked in /member/status",
                 ensemble.non_finite_members, plan->member_count());
  }
  if (comm.rank() == 0) warn_about_estimates(spec, *plan, ensemble);

  archive::RunInfo info;
  info.ranks = 0;
  for (const archive::PartIdentity& id : parts) info.ranks += static_cast<int>(id.ranks);
  info.rank = comm.rank();
  info.parts = static_cast<int>(parts.size());
  info.created_utc = comm.broadcast(utc_now());
  const Clock::time_point read = Clock::now();
  archive::write_archive(options.archive, spec, *plan, local, ensemble, info);
  if (comm.rank() == 0) {
    spdlog::info("archive {} written in {:.2f} s (the parts read in {:.2f} s)", options.archive,
                 std::chrono::duration<double>(Clock::now() - read).count(),
                 std::chrono::duration<double>(read - start).count());
  }
  return report_empty_cases(comm, spec, *plan, ensemble);
}

}  // namespace chaosweep::app
