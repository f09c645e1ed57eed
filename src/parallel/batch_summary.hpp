// What the reduction needs of one finished batch, computed once when the batch finishes: its
// summary (moments and sums over its valid members, laid out for the merge tree) and its
// counts. With the summary, the batch keeps only the member rows the archive will hold
// (output.members), and a rank folds the summaries of its batches into its part of the merge
// tree as they finish: its memory holds the tree's nodes and per-case counts, not a summary
// per batch. Pure: no communication.
#pragma once

#include <cstddef>
#include <cstdint>
#include <map>
#include <vector>

#include "plan/plan.hpp"
#include "results/table.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::parallel {

/// The per-member quantity of the table that has ensemble estimates (merge member_moments)
/// in this campaign, with its columns per member.
struct Estimated {
  const results::Quantity* quantity;
  std::size_t width;
};
std::vector<Estimated> estimated_quantities(const plan::Plan& plan);

/// The layout of a campaign's batch summaries: every (n, mean, m2) triple first, then every
/// sum, so that one merge tree merges them all. Offsets count doubles from the start.
///   summary: [estimated columns: moments | twins: [leads] log-separation moments, horizon and
///            log threshold distance moments | snapshots: [time][observable] moments, then
///            with paired cases [time][observable] moments of the paired differences |
///            time-mean errors: [observable] the 4 sums of stats::MemberErrorSums |
///            twins: [leads] separations first seen at the lead, the pairs never separated |
///            response: [group] the response sums (stats::LagSumsLayout) |
///            paired cases: [pair group] valid members, then the sums of their time means
///            [observable] and regime fractions [regime]]
///   counts:  [non-finite members | histogram bins | [time][regime] snapshot regime counts]
struct SummaryParts {
  stats::SummaryLayout layout;
  std::size_t columns = 0, leads = 0;  // estimated columns; twin leads (0: no twins)
  std::size_t estimated = 0, twin_moments = 0, snapshots = 0, errors = 0, twin_sums = 0;
  std::size_t response = 0, response_width = 0;  // offset and size of the response sums
  std::size_t pair = 0, pair_width = 0;          // offset and size of the pair-group sums
  std::size_t histogram = 1, regimes = 1, count_width = 1;
};
SummaryParts summary_parts(const spec::Spec& spec, const plan::Plan& plan);

/// Computes batch summaries of one campaign (what they need of the spec and plan resolved once).
class Summariser {
 public:
  Summariser(const spec::Spec& spec, const plan::Plan& plan);
  const SummaryParts& parts() const { return parts_; }
  /// Fills b.summary and b.summary_counts from b's member rows and batch partials.
  void operator()(run::BatchResult& b) const;
  /// Appends b's summary and counts to `summary` and `counts`.
  void append(const run::BatchResult& b, std::vector<double>& summary,
              std::vector<std::int64_t>& counts) const;

 private:
  SummaryParts parts_;
  std::vector<Estimated> estimated_;
  std::vector<double> lead_;  // twin lead times (none without twins)
  double threshold_;
  std::size_t observables_;
  const plan::Plan& plan_;  // outlives the summariser, as for LocalPartial
};

/// Fills b.summary and b.summary_counts (a Summariser made for one batch).
void summarise(const spec::Spec& spec, const plan::Plan& plan, run::BatchResult& b);
/// Keeps only the member rows the archive holds (the first plan.archived_members of each case)
/// and drops the batch partials the summary holds. Call after summarise().
void keep_archived_rows(const plan::Plan& plan, run::BatchResult& b);

/// A rank's share of the reduction: the merge-tree nodes of its batches and its per-case
/// counts. Batches may be added in any order; they are folded into the tree in batch order
/// (a batch that comes early waits until those before it have come).
class LocalPartial {
 public:
  /// `first` is the rank's first batch (its share is contiguous).
  LocalPartial(const spec::Spec& spec, const plan::Plan& plan, std::int64_t first);
  /// Fills b.summary and b.summary_counts.
  void summarise(run::BatchResult& b) const { summariser_(b); }
  /// Adds a batch (summarised here if it has not been).
  void add(const run::BatchResult& b);

  const SummaryParts& parts() const { return summariser_.parts(); }
  const stats::MergeTree& tree() const { return tree_; }
  const std::vector<double>& packed() const { return packed_; }
  const std::vector<std::int64_t>& counts() const { return counts_; }  // [case][count_width]
  /// Batches added but still waiting for an earlier one.
  std::size_t waiting() const { return pending_.size(); }

 private:
  void fold(std::int64_t index, const double* summary);

  const plan::Plan& plan_;
  Summariser summariser_;
  stats::MergeTree tree_;
  std::vector<double> packed_;
  std::vector<std::int64_t> counts_;
  std::int64_t next_;
  std::map<std::int64_t, std::vector<double>> pending_;
};

/// Every case's merged summary and summed counts, the same on every rank.
struct MergedCases {
  SummaryParts parts;
  std::vector<double> summary;       // [case][parts.layout.width()]
  std::vector<std::int64_t> counts;  // [case][parts.count_width]
  const double* at(std::size_t c, std::size_t offset) const {
    return summary.data() + c * parts.layout.width() + offset;
  }
  const std::int64_t* counts_at(std::size_t c, std::size_t offset) const {
    return counts.data() + c * parts.count_width + offset;
  }
};

}  // namespace chaosweep::parallel
