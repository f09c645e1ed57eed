// Internal to parallel/: the one place where per-batch summaries cross ranks. Each rank folds
// its own batches into the fixed merge tree of stats/merge_tree.hpp, and one collective joins
// the ranks' node lists in rank order: per-rank memory and message volume grow with the
// cases, the summary width and log2 of the batches per case, never with the batch count, and
// the merged values are bitwise the same on any number of ranks.
#pragma once

#include <cstdint>
#include <vector>

#include "parallel/batch_summary.hpp"
#include "parallel/communicator.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::parallel {

/// Every rank's partial joined in rank order: each case's merged summary and summed counts,
/// on every rank. Throws std::logic_error when a rank's batches are not all folded (one is
/// still waiting for an earlier one). Collective.
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
