// The one place where per-batch summaries cross ranks, and where runs of batches join (the
// ranks of one job, or the parts of a campaign run as several jobs, `chaosweep merge`). Each rank folds
// its own batches into the fixed merge tree of stats/merge_tree.hpp, and one collective joins
// the ranks' node lists in rank order: per-rank memory and message volume grow with the
// cases, the summary width and log2 of the batches per case, never with the batch count, and
// the merged values are bitwise the same on any number of ranks.
#pragma once

#include <cstdint>
#include <vector>

#include "parallel/batch_summary.hpp"
#include "parallel/communicator.hpp"
#include "plan/plan.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::parallel {

/// The merge tree of a campaign's batch summaries (the shape and layout LocalPartial uses).
stats::MergeTree campaign_tree(const plan::Plan& plan, const SummaryParts& parts);

/// A contiguous run of the campaign's batches, not yet finished: its node lists (packed, see
/// stats::MergeTree) and its per-case counts. Runs of adjacent batches join exactly, in any
/// grouping, so a run that a job's ranks covered and another job's join into the same result
/// as one job's ranks covering both.
struct PartialCases {
  std::vector<double> nodes;          // MergeTree packed form
  std::vector<std::int64_t> counts;   // [case][parts.count_width]
};

/// Every rank's partial joined in rank order, on every rank. Throws std::logic_error when a
/// rank's batches are not all folded (one is still waiting for an earlier one). Collective.
PartialCases join_ranks(const Communicator& comm, const LocalPartial& mine);

/// `right` = `left` joined with `right`, `left` holding the batches just before `right`'s.
/// Pure. Throws std::logic_error when the runs are not adjacent.
void join_runs(const stats::MergeTree& tree, const PartialCases& left, PartialCases& right);

/// The merged summary of every case from a run that holds all of the campaign's batches.
/// Pure. Throws std::logic_error when batches are missing.
MergedCases finish_cases(const stats::MergeTree& tree, const SummaryParts& parts,
                         const PartialCases& all);

/// Every rank's partial joined in rank order and finished: each case's merged summary and
/// summed counts, on every rank. Collective.
MergedCases merge_cases(const Communicator& comm, const LocalPartial& mine);

/// The same collective for summaries given directly (the MPI tests use it): the summaries of
/// this rank's batches (`indices`, increasing and contiguous within each
/// case; `summaries` [batch][layout.width()] in the same order) merged per case over every
/// rank's batches: [case][layout.width()]. Collective.
std::vector<double> merge_batches(const Communicator& comm, const stats::MergeShape& shape,
                                  const stats::SummaryLayout& layout,
                                  const std::vector<std::int64_t>& indices,
                                  const std::vector<double>& summaries);

/// Element-wise sums of integer counts per case over every rank's batches: [case][width] from
/// this rank's [batch][width] (in the order of `indices`). Collective.
std::vector<std::int64_t> sum_batches(const Communicator& comm, const stats::MergeShape& shape,
                                      std::size_t width, const std::vector<std::int64_t>& indices,
                                      const std::vector<std::int64_t>& counts);

}  // namespace chaosweep::parallel
