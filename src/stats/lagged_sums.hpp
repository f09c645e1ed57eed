// The sums behind the lagged covariances of observables with the state (statistics.response),
// accumulated online over a batch of members and mergeable by addition across batches.
// Pure numerics: no MPI, no HDF5, no YAML.
//
// A member is sampled at t_k = t_0 + k every, k = 0 .. N-1 (t_0 the end of the spin-up). With
// L lags (max_lag = L every) and the trapezoid weights w = (1/2, 1, ..., 1, 1/2) over lags
// 0 .. L, the lag-integrated covariance of observable A with the state x,
//   G = every sum_l w_l C_Ax(l every),  C_Ax(tau) = <A(t + tau) x(t)^T> - <A> <x>^T,
// needs, over the members and samples, only these sums (one block per group of members):
//   members                      n
//   sum_A   [observable]         sum of A(t_k) over k = 0 .. N-1
//   sum_x   [state]              sum of x(t_k) over k = 0 .. N-1
//   sum_xx  [i <= j]             sum of x_i(t_k) x_j(t_k), the upper triangle row by row
//   lagged  [observable][state]  sum over k = L .. N-1 of A(t_k) y(t_k)^T,
//                                y(t_k) = sum_l w_l x(t_{k-l})
// so that, with every member contributing N samples and N - L later times for every lag,
//   <A> = sum_A / (n N),  <x> = sum_x / (n N),  C(0) = sum_xx / (n N) - <x><x>^T,
//   G = every (lagged / (n (N - L)) - L <A><x>^T)       (sum_l w_l = L).
// y is kept as a running sum over the last L + 1 samples less half its two ends, so a sample
// costs O(state) for y plus the products, not O(L state).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "stats/saved_state.hpp"

namespace chaosweep::stats {

/// Offsets of one group's block of sums.
struct LagSumsLayout {
  std::size_t observables = 0, dim = 0;
  std::size_t members() const { return 0; }
  std::size_t sum_a() const { return 1; }
  std::size_t sum_x() const { return sum_a() + observables; }
  std::size_t sum_xx() const { return sum_x() + dim; }
  std::size_t lagged() const { return sum_xx() + dim * (dim + 1) / 2; }
  std::size_t width() const { return lagged() + observables * dim; }
};

/// The sums of one batch. Columns of the batch belong to groups of members; a column's sums go
/// to its group's block, added column by column in column order (the same operations whatever
/// the SIMD width or the number of ranks).
class LaggedSums {
 public:
  /// `group_of[j]` is the block (0 .. groups - 1) of column j, or -1 for a column that is not
  /// summed (padding). `lags` >= 1.
  LaggedSums(LagSumsLayout layout, int lags, int width, std::vector<int> group_of, int groups);

  /// Adds sample k (k = 0, 1, ... in order) of the state x ([dim][width]) and the observables
  /// (rows[o] -> [width]).
  void add(std::int64_t k, const double* x, const std::vector<const double*>& rows);

  /// The blocks, [groups][layout.width()], without the member counts (set by the caller).
  std::vector<double> blocks() const;
  const LagSumsLayout& layout() const { return layout_; }

  void save(const std::string& prefix, SavedState& out) const;
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  static void add_row_sums(double* sums, const double* const* rows, std::size_t n, int k);
  static void add_products(double* out, std::size_t rows, std::size_t cols,
                           const double* const* a, const double* b, std::size_t ldb, int k,
                           bool upper);

  LagSumsLayout layout_;
  int lags_, width_, groups_;
  std::vector<int> group_of_;
  std::vector<double> history_;  // [lags + 1][width][dim], sample k in slot k % (lags + 1)
  std::vector<double> window_;   // [width][dim], sum of the last lags + 1 samples
  std::vector<double> blocks_;   // [groups][width of a block], sum_xx filled by blocks()
  std::vector<double> square_;   // [groups][dim][dim], the sums of x_i x_j (i <= j used)
  std::vector<double> xt_, yt_;  // scratch, column-major: [width][dim]
  std::vector<const double*> x_rows_, a_rows_;  // scratch: rows of the factors
};

/// The static response of every observable's mean to additive forcings, predicted from the
/// sums (quasi-Gaussian fluctuation-dissipation relation): dA/dp = G C(0)^-1 e for a forcing
/// p entering as + p e. Per forcing and observable, the prediction from all groups and its
/// delete-one-group jackknife standard error.
struct PredictedResponse {
  std::vector<double> slope;   // [forcing][observable]
  std::vector<double> stderr_; // [forcing][observable]
};

/// `blocks` holds `groups` blocks of `layout`; every member contributed `samples` samples
/// (N > lags); `every` is the sample spacing in time units; `directions[p]` the state vector of
/// forcing p. NaN where fewer than one member (slope) or two groups with members (stderr), or
/// where C(0) is not positive definite.
PredictedResponse predict_response(const LagSumsLayout& layout, const double* blocks, int groups,
                                   int lags, std::int64_t samples, double every,
                                   const std::vector<std::vector<double>>& directions);

}  // namespace chaosweep::stats
