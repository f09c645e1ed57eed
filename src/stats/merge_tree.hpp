// The fixed merge tree of the ensemble reduction. Pure: no communication.
//
// Every case's batches sit at positions 0 .. B-1 (B batches per case). Their summaries are
// merged along one binary tree of fixed shape over those positions, whatever the rank count:
// node (level l, index j) holds the batches at positions [j 2^l, (j + 1) 2^l) and exists only
// when all of them do; its value is merge(node (l-1, 2j), node (l-1, 2j+1)). A case's result
// folds the maximal nodes of [0, B) (one per binary digit of B, largest first) from the right:
// n1 + (n2 + (n3 + ...)). Every merge therefore has the same operands in the same order on any
// number of ranks, and the result is bitwise reproducible though floating-point merges are
// not associative.
//
// A contiguous run of batches is held as its node list: the maximal nodes inside the run, in
// position order (at most two per level). Two adjacent runs combine by concatenating their
// lists and merging sibling pairs as they meet; the combination is exactly associative, so the
// ranks' lists can be combined in rank order by any reduction algorithm (parallel/ does it
// with one collective). Memory is cases x (2 log2 B + 2) summaries, independent of how many
// batches there are.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

namespace chaosweep::stats {

/// What one batch summary holds and how two merge: `moments` packed (n, mean, m2) triples,
/// merged with the pairwise update of Moments::merge, then `sums` values that add.
struct SummaryLayout {
  std::size_t moments = 0;
  std::size_t sums = 0;
  std::size_t width() const { return 3 * moments + sums; }
};

/// left = left (+) right, for summaries of the layout (left covers the earlier batches).
void merge_summary(const SummaryLayout& layout, double* left, const double* right);

/// The campaign's batches: `cases` x `batches_per_case`, batch b at position b % batches_per_case
/// of case b / batches_per_case.
struct MergeShape {
  std::int64_t cases = 0;
  std::int64_t batches_per_case = 1;
};

/// The node lists of every case of a campaign, in a packed form of fixed size.
class MergeTree {
 public:
  MergeTree(MergeShape shape, SummaryLayout layout);

  /// Doubles of a packed form: per case, a node count and room for the longest node list.
  std::size_t packed_size() const { return static_cast<std::size_t>(cases_) * case_stride_; }
  /// An empty packed form (no batches).
  std::vector<double> empty() const;
  /// Adds batch `index` (campaign batch number: case index / B, position index % B) with its
  /// summary to `packed`; a case's batches must come in increasing, contiguous positions.
  void add(std::vector<double>& packed, std::int64_t index, const double* summary) const;
  /// right = left (+) right, `left` holding the batches just before `right`'s in every case
  /// (either may hold none). Exactly associative. Throws std::logic_error when the runs are not
  /// adjacent.
  void combine(const double* left, double* right) const;
  /// The merged summary of every case, [case][width], from a packed form that holds all of
  /// the case's batches. Throws std::logic_error when a case misses batches.
  std::vector<double> finish(const std::vector<double>& packed) const;

  /// Slots of a case's node list: 2 per level, enough for any contiguous run.
  std::size_t slots() const { return slots_; }

 private:
  std::int64_t cases_ = 0, batches_per_case_ = 0;
  SummaryLayout layout_;
  std::size_t width_ = 0, slots_ = 0, node_stride_ = 0, case_stride_ = 0;
};

}  // namespace chaosweep::stats
