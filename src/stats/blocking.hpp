// Standard error of a time mean under autocorrelation, by blocking (repeated pair averaging of
// block means). Pure numerics: no communication, no I/O.
//
// A series of n correlated samples with variance sigma^2 has a time mean whose variance is
//   Var(mean) = sigma^2 2 tau_int / n,   tau_int = 1/2 + sum_{t>=1} rho(t)   (in samples),
// not the iid sigma^2 / n. Blocking estimates it without the autocorrelation function: cut the
// series into blocks of b samples; the variance s_b^2 of the block means times b / n estimates
// Var(mean), and the estimate rises with b to a plateau once b is long against the
// correlation time. Level k holds the means of blocks of b_k = base * 2^k samples, each the
// average of two consecutive level k-1 block means, so all levels cost O(log2 n) memory and
// O(1) work per base block (amortised).
//
// Plateau rule (blocking_estimate): the smallest level with at least kMinBlocks blocks such that
//  (1) its block length is at least kBlocksPerTau times the correlation time estimated there,
//      b_k >= 32 tau_k,   tau_k = b_k s_k^2 / (2 sigma^2), and
//  (2) the next level, when it has kMinBlocks blocks too, agrees with it: their Var(mean)
//      estimates differ by at most kAgreement times the next level's own standard deviation,
//      V_{k+1} sqrt(2 / (n_{k+1} - 1)).
// Why (1): for correlations that decay like exp(-t / tau) the blocked variance falls short of
// the plateau by a relative amount of about tau / b (exactly 2 phi / (b (1 - phi^2)) for an
// AR(1) series, which tends to tau / b as phi -> 1), so b >= 32 tau keeps the shortfall near 3%
// in the variance and 1.5% in the standard error. Below the plateau tau_k is close to b_k / 2
// (block means barely differ from single samples), so the test cannot pass there by chance.
// Why (2): an oscillating correlation function (Lorenz-63's z, period ~0.7 time units) makes
// the blocked variance approach its plateau from above, slowly, with a small tau_k that passes
// (1) early; the estimate is then still falling from one level to the next, by more than the
// statistical noise. Requiring the next level to agree within its noise stops at the plateau
// from either side. When no level qualifies (the series is short against its correlation
// time) the largest estimate among the levels with kMinBlocks blocks is used (the conservative
// side) and `plateau` is false; with no such level the estimate is NaN.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stats/ensemble.hpp"
#include "stats/saved_state.hpp"

namespace chaosweep::stats {

/// Blocks a level needs before its estimate is used (relative uncertainty 1/sqrt(30) = 18%).
constexpr double kMinBlocks = 16.0;
/// Block length, in correlation times, that marks the plateau (see the header comment).
constexpr double kBlocksPerTau = 32.0;
/// Agreement with the next level, in units of that level's standard deviation (two-sided,
/// about 95% for a well-sampled level).
constexpr double kAgreement = 2.0;

/// One blocking level of one series: block length in samples and the moments of its block
/// means (n blocks, their mean and sum of squared deviations).
struct BlockLevel {
  double block_length = 0.0;
  Moments block_means;
};

/// The standard error of a time mean and what follows from it.
struct BlockingEstimate {
  double stderr_ = 0.0;   // standard error of the mean of all n samples
  double tau_int = 0.0;   // integrated autocorrelation time in samples, n stderr^2 / (2 sigma^2)
  double n_eff = 0.0;     // independent samples, n / (2 tau_int) = sigma^2 / stderr^2
  int level = -1;         // the level used (-1: none had enough blocks)
  bool plateau = false;   // the plateau rule was met at `level`
};

/// Applies the plateau rule to the levels of one series of `samples` samples whose single-sample
/// variance (n-1 denominator) is `sample_variance`. NaN fields when no level has kMinBlocks
/// blocks or the variance is not positive and finite.
BlockingEstimate blocking_estimate(const std::vector<BlockLevel>& levels, double samples,
                                   double sample_variance);

/// Standard error of an ensemble mean of `members` members' time means, the larger of
///  (a) across / sqrt(members): the spread of the time means across members (`across` is their
///      sample standard deviation; needs 2 members), and
///  (b) sqrt(sum_member_var) / members: the members' own standard errors pooled
///      (`sum_member_var` = sum of their squared blocking standard errors).
/// Members are independent, so both estimate the same quantity when every member samples the
/// same statistics; (a) also sees a spread that a single member cannot (initial states that
/// settle in different states), (b) stays defined with one member and is less noisy with a
/// few. The larger is the conservative choice. Either alone when the other is NaN; NaN when both
/// are.
double ensemble_mean_stderr(double across, double members, double sum_member_var);

/// Blocking levels for `cells` independent series at once (SoA: value of cell i at [i]), fed
/// with the means of consecutive base blocks of `base_length` samples each (1: every sample).
/// Every cell sees the same operations in the same order, so its result does not depend on the
/// other cells. Levels are added as the series grows: about log2(n / base_length) of them.
class BlockedMeans {
 public:
  BlockedMeans(int cells, std::int64_t base_length);

  /// Adds the next base block of every cell: means[i] is cell i's block mean.
  void add(const double* means);

  /// The levels of cell i (level k: blocks of base_length * 2^k samples).
  std::vector<BlockLevel> levels(int cell) const;
  /// The same into `out` (resized), which a caller reuses from cell to cell.
  void levels(int cell, std::vector<BlockLevel>& out) const;
  std::int64_t base_blocks() const { return counts_.empty() ? 0 : counts_.front(); }
  std::int64_t base_length() const { return base_length_; }

  /// The complete state as arrays `<prefix>shape` {levels L}, `<prefix>levels` {base length,
  /// blocks per level [L], 1 if a half pair waits at the level [L]}, and `<prefix>mean`, `m2`,
  /// `pending` ([L][cells] each).
  void save(const std::string& prefix, SavedState& out) const;
  /// Restores a state saved by an instance of the same shape; throws chaosweep::Error if not.
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  void push(std::size_t level, const double* values);

  int cells_;
  std::int64_t base_length_;
  std::vector<std::int64_t> counts_;         // [level], blocks added (same for every cell)
  std::vector<std::int64_t> has_pending_;    // [level], 1 when a first half waits for its pair
  std::vector<double> mean_, m2_, pending_;  // [level][cells]: Welford moments, waiting half
  std::vector<double> pair_;                 // [cells], scratch
};

}  // namespace chaosweep::stats
