// Ensemble estimates across members, built from per-batch partial results merged in a fixed
// order. Pure: no communication. parallel/ moves partials between ranks; the merge here is
// associative up to rounding (Chan et al. pairwise update) and the caller fixes the order and
// grouping (the merge tree of stats/merge_tree.hpp), so the result does not depend on the
// number of ranks.
#pragma once

#include <cstdint>
#include <functional>
#include <vector>

namespace chaosweep::stats {

/// Count, mean and sum of squared deviations of a set of values (mergeable).
struct Moments {
  double n = 0.0;
  double mean = 0.0;
  double m2 = 0.0;

  void add(double x);                 // Welford's one-pass update
  void merge(const Moments& other);   // Chan's pairwise update; exact for n == 0 on either side
  double variance() const;            // m2 / (n - 1), NaN when n < 2
  double stddev() const;

  /// Packed form, how partial moments travel between ranks and sit in batch results:
  /// kPacked doubles n, mean, m2.
  static constexpr int kPacked = 3;
  void append_to(std::vector<double>& out) const {
    out.push_back(n);
    out.push_back(mean);
    out.push_back(m2);
  }
  static Moments unpack(const double* p) { return Moments{p[0], p[1], p[2]}; }
};

/// Across-member summary of one quantity for one case.
struct EnsembleEstimate {
  double mean = 0.0;
  double std = 0.0;      // sample standard deviation across members
  double ci_low = 0.0;   // 95% interval of the ensemble mean, Student t with n-1 d.o.f.
  double ci_high = 0.0;
  std::int64_t n = 0;
};

/// Two-sided 95% Student-t quantile t_{0.975, dof}; NaN for dof < 1.
double student_t975(double dof);

/// Turns merged moments into an estimate (NaN std/interval when n < 2, NaN mean when n == 0).
EnsembleEstimate estimate(const Moments& m);

/// Least-squares fit of y_c (case values) on the case's axis values (plus an intercept).
/// x is [cases][axes]; y and y_se are [cases]. The slope for each axis is a fixed linear
/// combination a_c of the y_c; its standard error propagates the ensemble sampling error,
/// sqrt(sum a_c^2 y_se_c^2). Axes with a single distinct value give NaN. Cases with non-finite
/// y are left out.
struct Slope {
  double slope = 0.0;
  double stderr_ = 0.0;
};
std::vector<Slope> response_slopes(const std::vector<std::vector<double>>& x,
                                   const std::vector<double>& y, const std::vector<double>& y_se);

/// How well a linear response describes the cases: the chi-square of the weighted
/// least-squares fit y_c = b0 + sum_k b_k x_ck (weights 1 / se_c^2) over the cases with a
/// finite value and a positive finite error, its degrees of freedom (cases - varying axes - 1)
/// and the probability of a chi-square at least as large if the response were linear and the
/// errors Gaussian (its p-value). NaN chi-square and p-value, 0 degrees of freedom, when
/// there are too few such cases.
struct FitQuality {
  double chi2 = 0.0;
  std::int64_t dof = 0;
  double p_value = 0.0;
};
FitQuality linear_fit_quality(const std::vector<std::vector<double>>& x,
                              const std::vector<double>& y, const std::vector<double>& y_se);

/// Independent fits taken together: the sum of the chi-squares and of the degrees of freedom
/// of the fits that have any (dof > 0), and the p-value of that sum; NaN chi-square and
/// p-value, 0 degrees of freedom, when none has.
FitQuality combined_fit_quality(const std::vector<FitQuality>& fits);

/// The derivative dy/dx at every point of one line of the grid, as numpy.gradient(y, x)
/// defines it (edge_order 1): at interior points the second-order central difference for
/// non-uniform spacing, f'_i = a f_{i-1} + b f_i + c f_{i+1} with h1 = x_i - x_{i-1},
/// h2 = x_{i+1} - x_i, a = -h2 / (h1 (h1 + h2)), b = (h2 - h1) / (h1 h2), c = h1 / (h2 (h1 + h2))
/// ((f_{i+1} - f_{i-1}) / (2h) when the spacing is uniform); at the two ends the one-sided
/// first difference. The standard error propagates the points' errors through these
/// coefficients, sqrt(sum over i, j of c_i c_j rho_ij se_i se_j), with the correlation rho_ij
/// of points i and j given by `rho` (i != j only), or 0 when `rho` is empty (independent
/// points: sqrt(sum of c_i^2 se_i^2)); a negative sum from an estimated rho counts as 0.
/// Fewer than two points: NaN.
std::vector<Slope> gradient_along(const std::vector<double>& x, const std::vector<double>& y,
                                  const std::vector<double>& y_se,
                                  const std::function<double(std::size_t, std::size_t)>& rho = {});

/// The correlation of two paired quantities estimated from their means over the same groups
/// of members: the weighted sample correlation of the group means a_g and b_g, each group
/// weighted by the mean of its member counts in the two (n_a_g + n_b_g) / 2 (the means of
/// groups of n members correlate as the members do). Groups empty in either are skipped; 0
/// when fewer than 3 groups remain or either group mean does not vary.
double group_correlation(const std::vector<double>& n_a, const std::vector<double>& a,
                         const std::vector<double>& n_b, const std::vector<double>& b);

}  // namespace chaosweep::stats
