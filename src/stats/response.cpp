// Least-squares response slopes of case values on the swept axes (declared in ensemble.hpp).
#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <set>
#include <stdexcept>

#include "stats/ensemble.hpp"

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Indices of the cases with finite y (and finite axis values).
std::vector<std::size_t> usable_cases(const std::vector<std::vector<double>>& x,
                                      const std::vector<double>& y) {
  std::vector<std::size_t> used;
  for (std::size_t c = 0; c < y.size(); ++c) {
    bool ok = std::isfinite(y[c]);
    for (double v : x[c]) ok = ok && std::isfinite(v);
    if (ok) used.push_back(c);
  }
  return used;
}

/// Axes that take at least two distinct values over the used cases.
std::vector<std::size_t> varying_axes(const std::vector<std::vector<double>>& x,
                                      const std::vector<std::size_t>& used, std::size_t axes) {
  std::vector<std::size_t> kept;
  for (std::size_t k = 0; k < axes; ++k) {
    std::set<double> distinct;
    for (std::size_t c : used) distinct.insert(x[c][k]);
    if (distinct.size() >= 2) kept.push_back(k);
  }
  return kept;
}

/// The least-squares operator A = (X^T X)^{-1} X^T ([p][n]) of the design matrix X ([n][p]),
/// from a column-pivoted QR (X P = Q R, so A = P R^{-1} Q1^T with Q1 the first p columns of Q).
/// Empty when X has rank < p.
Eigen::MatrixXd least_squares_operator(const Eigen::MatrixXd& X) {
  const Eigen::Index n = X.rows(), p = X.cols();
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(X);
  if (qr.rank() < p) return Eigen::MatrixXd();
  const Eigen::MatrixXd q1 = qr.householderQ() * Eigen::MatrixXd::Identity(n, p);
  const Eigen::MatrixXd r = qr.matrixR().topLeftCorner(p, p);
  const Eigen::MatrixXd pivoted = r.triangularView<Eigen::Upper>().solve(q1.transpose());
  return qr.colsPermutation() * pivoted;
}

}  // namespace

// Model: y_c = b0 + sum_k b_k x_ck + noise, over the used cases and varying axes. The fitted
// slope is b_k = sum_c a_kc y_c with a_k the row of A for axis k, and its standard error from
// the ensemble sampling error alone is sqrt(sum_c a_kc^2 se_c^2).
std::vector<Slope> response_slopes(const std::vector<std::vector<double>>& x,
                                   const std::vector<double>& y, const std::vector<double>& y_se) {
  if (x.size() != y.size() || y_se.size() != y.size()) {
    throw std::invalid_argument("response_slopes needs one axis row, value and error per case.");
  }
  const std::size_t axes = x.empty() ? 0 : x.front().size();
  for (const auto& row : x) {
    if (row.size() != axes) throw std::invalid_argument("response_slopes: ragged axis values.");
  }
  std::vector<Slope> out(axes, Slope{kNaN, kNaN});
  const std::vector<std::size_t> used = usable_cases(x, y);
  const std::vector<std::size_t> kept = varying_axes(x, used, axes);
  if (kept.empty() || used.size() < kept.size() + 1) return out;

  const Eigen::Index n = static_cast<Eigen::Index>(used.size());
  Eigen::MatrixXd design(n, static_cast<Eigen::Index>(kept.size()) + 1);
  for (Eigen::Index i = 0; i < n; ++i) {
    design(i, 0) = 1.0;  // intercept
    for (std::size_t j = 0; j < kept.size(); ++j) design(i, j + 1) = x[used[i]][kept[j]];
  }
  const Eigen::MatrixXd a = least_squares_operator(design);
  if (a.size() == 0) return out;
  for (std::size_t j = 0; j < kept.size(); ++j) {
    double slope = 0.0, var = 0.0;
    for (Eigen::Index i = 0; i < n; ++i) {
      const double coef = a(static_cast<Eigen::Index>(j) + 1, i);
      slope += coef * y[used[i]];
      var += coef * coef * y_se[used[i]] * y_se[used[i]];
    }
    out[kept[j]] = Slope{slope, std::sqrt(var)};
  }
  return out;
}

}  // namespace chaosweep::stats
