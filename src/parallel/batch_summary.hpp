// What the reduction needs of one finished batch, computed once when the batch finishes: its
// summary (per-column moments and sums over its valid members, laid out for the merge tree)
// and its counts. With the summary, the batch keeps only the member rows the archive will
// hold (output.members), so a rank's memory and its checkpoints hold summaries, not every
// member's results. Pure: no communication.
#pragma once

#include <cstddef>
#include <vector>

#include "plan/plan.hpp"
#include "results/table.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::parallel {

/// A part of BatchResult::summary: where it starts and how it merges.
struct SummaryPart {
  std::size_t offset = 0;
  stats::SummaryLayout layout;
};

/// The per-member quantity of the table that has ensemble estimates (merge member_moments)
/// in this campaign, with its columns per member.
struct Estimated {
  const results::Quantity* quantity;
  std::size_t width;
};
std::vector<Estimated> estimated_quantities(const plan::Plan& plan);

/// The layout of a campaign's batch summaries. summary: [estimated moments | time-mean error
/// sums | twins | snapshot moments]; summary_counts: [non-finite members | histogram |
/// snapshot regime counts].
struct SummaryParts {
  SummaryPart estimated;   // per estimated column: (n, mean, m2) over valid members
  SummaryPart errors;      // per observable: the 4 sums of stats::MemberErrorSums
  SummaryPart twins;       // per lead and for horizon and level: moments; separations: sums
  SummaryPart snapshots;   // per snapshot time and observable: moments
  std::size_t width = 0;
  std::size_t histogram_offset = 1, regimes_offset = 1, count_width = 1;
};
SummaryParts summary_parts(const spec::Spec& spec, const plan::Plan& plan);

/// Fills b.summary and b.summary_counts from b's member rows and batch partials.
void summarise(const spec::Spec& spec, const plan::Plan& plan, run::BatchResult& b);

/// This rank's batches as the reduction sees them: their numbers and summaries in batch order
/// (summarised here when a batch has not been yet).
struct LocalSummaries {
  SummaryParts parts;
  std::vector<std::int64_t> indices;
  std::vector<double> summaries;       // [batch][parts.width]
  std::vector<std::int64_t> counts;    // [batch][parts.count_width]

  LocalSummaries(const spec::Spec& spec, const plan::Plan& plan,
                 const std::vector<run::BatchResult>& local);
  /// One part of every batch's summary, [batch][part width].
  std::vector<double> part(const SummaryPart& p) const;
  /// Counts [offset, offset + width) of every batch, [batch][width].
  std::vector<std::int64_t> count_part(std::size_t offset, std::size_t width) const;
};
/// Keeps only the member rows the archive holds (the first plan.archived_members of each case)
/// and drops the batch partials the summary holds. Call after summarise().
void keep_archived_rows(const plan::Plan& plan, run::BatchResult& b);

}  // namespace chaosweep::parallel
