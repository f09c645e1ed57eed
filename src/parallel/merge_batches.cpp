// Per-batch summaries merged per case across ranks (see merge_batches.hpp).
#include "parallel/merge_batches.hpp"

#include <stdexcept>
#include <string>

namespace chaosweep::parallel {

stats::MergeTree campaign_tree(const plan::Plan& plan, const SummaryParts& parts) {
  return stats::MergeTree(
      stats::MergeShape{static_cast<std::int64_t>(plan.cases.size()), plan.batches_per_case()},
      parts.layout);
}

PartialCases join_ranks(const Communicator& comm, const LocalPartial& mine) {
  if (mine.waiting() > 0) {
    throw std::logic_error("join_ranks: " + std::to_string(mine.waiting()) +
                           " batches wait for an earlier one that never came");
  }
  const stats::MergeTree& tree = mine.tree();
  return PartialCases{
      comm.combine_in_rank_order(
          mine.packed(), [&tree](const double* left, double* right) { tree.combine(left, right); }),
      comm.sum(mine.counts())};
}

void join_runs(const stats::MergeTree& tree, const PartialCases& left, PartialCases& right) {
  if (left.nodes.size() != tree.packed_size() || right.nodes.size() != tree.packed_size() ||
      left.counts.size() != right.counts.size()) {
    throw std::logic_error("join_runs: partials of another campaign's shape");
  }
  tree.combine(left.nodes.data(), right.nodes.data());
  for (std::size_t k = 0; k < right.counts.size(); ++k) right.counts[k] += left.counts[k];
}

MergedCases finish_cases(const stats::MergeTree& tree, const SummaryParts& parts,
                         const PartialCases& all) {
  return MergedCases{parts, tree.finish(all.nodes), all.counts};
}

MergedCases merge_cases(const Communicator& comm, const LocalPartial& mine) {
  return finish_cases(mine.tree(), mine.parts(), join_ranks(comm, mine));
}

std::vector<double> merge_batches(const Communicator& comm, const stats::MergeShape& shape,
                                  const stats::SummaryLayout& layout,
                                  const std::vector<std::int64_t>& indices,
                                  const std::vector<double>& summaries) {
  const std::size_t width = layout.width();
  if (summaries.size() != indices.size() * width) {
    throw std::logic_error("merge_batches: summaries do not match the batches");
  }
  const stats::MergeTree tree(shape, layout);
  std::vector<double> packed = tree.empty();
  for (std::size_t i = 0; i < indices.size(); ++i) {
    tree.add(packed, indices[i], summaries.data() + i * width);
  }
  const std::vector<double> all = comm.combine_in_rank_order(
      packed, [&tree](const double* left, double* right) { tree.combine(left, right); });
  return tree.finish(all);
}

std::vector<std::int64_t> sum_batches(const Communicator& comm, const stats::MergeShape& shape,
                                      std::size_t width, const std::vector<std::int64_t>& indices,
                                      const std::vector<std::int64_t>& counts) {
  if (counts.size() != indices.size() * width) {
    throw std::logic_error("sum_batches: counts do not match the batches");
  }
  std::vector<std::int64_t> sums(static_cast<std::size_t>(shape.cases) * width, 0);
  for (std::size_t i = 0; i < indices.size(); ++i) {
    if (indices[i] < 0 || indices[i] >= shape.cases * shape.batches_per_case) {
      throw std::logic_error("sum_batches: batch " + std::to_string(indices[i]) + " out of range");
    }
    const std::size_t c = static_cast<std::size_t>(indices[i] / shape.batches_per_case);
    for (std::size_t k = 0; k < width; ++k) sums[c * width + k] += counts[i * width + k];
  }
  return comm.sum(sums);
}

}  // namespace chaosweep::parallel
