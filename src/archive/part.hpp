// A part archive: what one job of a campaign run as several (`run --part I/N`) leaves for
// `chaosweep merge`. One sealed HDF5 file (archive/seal.hpp, like an archive):
//
//   attributes of /   part_of ("chaosweep campaign", marks a part), part I, parts N,
//                     first_batch, end_batch (the part's batches [first, end) of the plan),
//                     spec_yaml, spec_sha256, campaign, model, tool_version, format_version,
//                     created_utc, ranks, status
//   /merge/nodes      float64: the part's merge-tree node lists (stats::MergeTree packed form)
//   /merge/counts     int64 [case][count]: its per-case counts
//   /rows/<name>      each per-member quantity the archive holds, [row][...]: the part's kept
//                     member rows in (case, member) order, the plan's kept rows
//                     [kept_before(first), kept_before(end))
//   /rows/trajectory  float64 [row][step][variable]: its stored trajectories, likewise
//
// The parts of a campaign are contiguous runs of its batches (plan::share over N), so their
// node lists join exactly (parallel/merge_batches.hpp) and their rows lie end to end: the
// merged archive is the one a single job writes.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "archive/writer.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::archive {

/// Which part of a campaign a job runs: part `index` (1-based) of `count`, the plan's batches
/// [first_batch, end_batch) = plan::share(batch_count, index - 1, count).
struct PartRange {
  int index = 1, count = 1;
  std::int64_t first_batch = 0, end_batch = 0;
};
PartRange part_range(const plan::Plan& plan, int index, int count);

/// Collective over the part's ranks. `local` are this rank's batches that hold archive rows,
/// in batch order; `nodes` and `counts` the part's joined partial (the same on every rank).
/// Written under a temporary name, sealed and renamed into place like an archive.
void write_part(const std::string& path, const spec::Spec& spec, const plan::Plan& plan,
                const PartRange& part, const std::vector<run::BatchResult>& local,
                const std::vector<double>& nodes, const std::vector<std::int64_t>& counts,
                const RunInfo& info);

/// What a part archive says of itself.
struct PartIdentity {
  std::string path;
  PartRange part;
  std::string spec_yaml, spec_sha256, tool_version, created_utc;
  std::int64_t ranks = 0;
};

/// Reads the identity of the part archive at `path`, after checking its seal when `verify`.
/// Throws UsageError with one line starting with `path` when it is missing, damaged, not a
/// part archive (a whole campaign's archive, say) or of a newer format.
PartIdentity read_part_identity(const std::string& path, bool verify = true);

/// The part's node lists and counts; their sizes are checked against `nodes_size` and
/// `counts_size` (UsageError naming the part when they differ).
void read_part_partial(const std::string& path, std::size_t nodes_size, std::size_t counts_size,
                       std::vector<double>& nodes, std::vector<std::int64_t>& counts);

/// The part's batches that hold archive rows, rebuilt as the batch results the archive writer
/// takes (their per-member quantities and trajectories only), in batch order.
std::vector<run::BatchResult> read_part_rows(const std::string& path, const plan::Plan& plan,
                                             const PartRange& part);

}  // namespace chaosweep::archive
