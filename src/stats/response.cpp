// Least-squares response slopes of case values on the swept axes (declared in ensemble.hpp).
#include <Eigen/Dense>
#include <gsl/gsl_cdf.h>

#include <algorithm>
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

FitQuality linear_fit_quality(const std::vector<std::vector<double>>& x,
                              const std::vector<double>& y, const std::vector<double>& y_se) {
  if (x.size() != y.size() || y_se.size() != y.size()) {
    throw std::invalid_argument("linear_fit_quality needs one axis row, value and error per case.");
  }
  FitQuality q{kNaN, 0, kNaN};
  const std::size_t axes = x.empty() ? 0 : x.front().size();
  std::vector<std::size_t> used;
  for (std::size_t c : usable_cases(x, y)) {
    if (std::isfinite(y_se[c]) && y_se[c] > 0.0) used.push_back(c);
  }
  const std::vector<std::size_t> kept = varying_axes(x, used, axes);
  const std::size_t p = kept.size() + 1;
  if (kept.empty() || used.size() <= p) return q;
  // Weighted least squares: rows scaled by 1 / se, so the residual norm is the chi-square.
  const Eigen::Index n = static_cast<Eigen::Index>(used.size());
  Eigen::MatrixXd design(n, static_cast<Eigen::Index>(p));
  Eigen::VectorXd target(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double w = 1.0 / y_se[used[i]];
    design(i, 0) = w;
    for (std::size_t j = 0; j < kept.size(); ++j) design(i, j + 1) = w * x[used[i]][kept[j]];
    target(i) = w * y[used[i]];
  }
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(design);
  if (qr.rank() < static_cast<Eigen::Index>(p)) return q;
  const Eigen::VectorXd b = qr.solve(target);
  q.chi2 = (design * b - target).squaredNorm();
  q.dof = static_cast<std::int64_t>(used.size() - p);
  q.p_value = gsl_cdf_chisq_Q(q.chi2, static_cast<double>(q.dof));
  return q;
}

FitQuality combined_fit_quality(const std::vector<FitQuality>& fits) {
  FitQuality q{kNaN, 0, kNaN};
  double chi2 = 0.0;
  for (const FitQuality& f : fits) {
    if (f.dof <= 0) continue;
    chi2 += f.chi2;
    q.dof += f.dof;
  }
  if (q.dof == 0) return q;
  q.chi2 = chi2;
  q.p_value = gsl_cdf_chisq_Q(q.chi2, static_cast<double>(q.dof));
  return q;
}

std::vector<Slope> gradient_along(const std::vector<double>& x, const std::vector<double>& y,
                                  const std::vector<double>& y_se,
                                  const std::function<double(std::size_t, std::size_t)>& rho) {
  const std::size_t n = x.size();
  if (y.size() != n || y_se.size() != n) {
    throw std::invalid_argument("gradient_along needs one value and error per point.");
  }
  std::vector<Slope> out(n, Slope{kNaN, kNaN});
  if (n < 2) return out;
  const auto combine = [&](std::size_t i, const double* coef, const std::size_t* at, int k) {
    double value = 0.0, var = 0.0;
    for (int j = 0; j < k; ++j) {
      value += coef[j] * y[at[j]];
      var += coef[j] * coef[j] * y_se[at[j]] * y_se[at[j]];
    }
    if (rho) {
      for (int j = 0; j < k; ++j) {
        for (int l = j + 1; l < k; ++l) {
          var += 2.0 * coef[j] * coef[l] * rho(at[j], at[l]) * y_se[at[j]] * y_se[at[l]];
        }
      }
      var = std::max(var, 0.0);
    }
    out[i] = Slope{value, std::sqrt(var)};
  };
  bool uniform = true;
  for (std::size_t i = 1; i + 1 < n; ++i) uniform = uniform && (x[i + 1] - x[i] == x[1] - x[0]);
  for (std::size_t i = 1; i + 1 < n; ++i) {
    const double h1 = x[i] - x[i - 1], h2 = x[i + 1] - x[i];
    const std::size_t at[3] = {i - 1, i, i + 1};
    if (uniform) {
      const double coef[3] = {-1.0 / (2.0 * h1), 0.0, 1.0 / (2.0 * h1)};
      const std::size_t ends[2] = {i - 1, i + 1};
      const double two[2] = {coef[0], coef[2]};
      combine(i, two, ends, 2);
      // numpy's uniform form, (f_{i+1} - f_{i-1}) / (2 h), computed as it computes it
      out[i].slope = (y[i + 1] - y[i - 1]) / (2.0 * h1);
    } else {
      const double coef[3] = {-h2 / (h1 * (h1 + h2)), (h2 - h1) / (h1 * h2), h1 / (h2 * (h1 + h2))};
      combine(i, coef, at, 3);
    }
  }
  const double first[2] = {-1.0 / (x[1] - x[0]), 1.0 / (x[1] - x[0])};
  const std::size_t first_at[2] = {0, 1};
  combine(0, first, first_at, 2);
  out[0].slope = (y[1] - y[0]) / (x[1] - x[0]);
  const double last[2] = {-1.0 / (x[n - 1] - x[n - 2]), 1.0 / (x[n - 1] - x[n - 2])};
  const std::size_t last_at[2] = {n - 2, n - 1};
  combine(n - 1, last, last_at, 2);
  out[n - 1].slope = (y[n - 1] - y[n - 2]) / (x[n - 1] - x[n - 2]);
  return out;
}

double group_correlation(const std::vector<double>& n_a, const std::vector<double>& a,
                         const std::vector<double>& n_b, const std::vector<double>& b) {
  const std::size_t groups = n_a.size();
  if (a.size() != groups || n_b.size() != groups || b.size() != groups) {
    throw std::invalid_argument("group_correlation needs one count and mean per group in each.");
  }
  double w_sum = 0.0, mean_a = 0.0, mean_b = 0.0;
  int used = 0;
  for (std::size_t g = 0; g < groups; ++g) {
    if (!(n_a[g] > 0.0 && n_b[g] > 0.0)) continue;
    const double w = 0.5 * (n_a[g] + n_b[g]);
    w_sum += w;
    mean_a += w * a[g];
    mean_b += w * b[g];
    ++used;
  }
  if (used < 3) return 0.0;
  mean_a /= w_sum;
  mean_b /= w_sum;
  double saa = 0.0, sbb = 0.0, sab = 0.0;
  for (std::size_t g = 0; g < groups; ++g) {
    if (!(n_a[g] > 0.0 && n_b[g] > 0.0)) continue;
    const double w = 0.5 * (n_a[g] + n_b[g]);
    const double da = a[g] - mean_a, db = b[g] - mean_b;
    saa += w * da * da;
    sbb += w * db * db;
    sab += w * da * db;
  }
  if (!(saa > 0.0 && sbb > 0.0)) return 0.0;
  return std::clamp(sab / std::sqrt(saa * sbb), -1.0, 1.0);
}

}  // namespace chaosweep::stats
