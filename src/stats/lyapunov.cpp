// QR re-orthonormalisation (Eigen's Householder QR) and the Kaplan-Yorke dimension.
#include "stats/lyapunov.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <stdexcept>

namespace chaosweep::stats {

void qr_renormalise(double* columns, int n, int k, double* log_abs_r) {
  if (k < 1 || n < 1 || k > n) {
    throw std::invalid_argument("qr_renormalise needs 1 <= k <= n");
  }
  Eigen::Map<Eigen::MatrixXd> V(columns, n, k);
  const Eigen::HouseholderQR<Eigen::MatrixXd> qr(V);
  const Eigen::MatrixXd& packed = qr.matrixQR();  // R in the upper triangle
  const Eigen::MatrixXd Q = qr.householderQ() * Eigen::MatrixXd::Identity(n, k);
  for (int j = 0; j < k; ++j) {
    const double r = packed(j, j);
    log_abs_r[j] = std::log(std::abs(r));
    const double sign = r < 0.0 ? -1.0 : 1.0;
    V.col(j) = sign * Q.col(j);
  }
}

void gram_schmidt_batch(double* vectors, int n, int k, int width, double* log_r, double* scratch) {
  if (k < 1 || n < 1 || k > n || width < 1) {
    throw std::invalid_argument("gram_schmidt_batch needs 1 <= k <= n and width >= 1");
  }
  const long w = width;
  double* __restrict r = scratch;  // [width]: a projection, then a squared norm
  for (int j = 0; j < k; ++j) {
    double* v = vectors + static_cast<long>(j) * n * w;
    for (int pass = 0; pass < 2; ++pass) {
      for (int i = 0; i < j; ++i) {
        const double* q = vectors + static_cast<long>(i) * n * w;
        for (long m = 0; m < w; ++m) r[m] = q[m] * v[m];
        for (int c = 1; c < n; ++c) {
          const double* qc = q + c * w;
          const double* vc = v + c * w;
          for (long m = 0; m < w; ++m) r[m] += qc[m] * vc[m];
        }
        for (int c = 0; c < n; ++c) {
          const double* qc = q + c * w;
          double* vc = v + c * w;
          for (long m = 0; m < w; ++m) vc[m] -= r[m] * qc[m];
        }
      }
    }
    for (long m = 0; m < w; ++m) r[m] = v[m] * v[m];
    for (int c = 1; c < n; ++c) {
      const double* vc = v + c * w;
      for (long m = 0; m < w; ++m) r[m] += vc[m] * vc[m];
    }
    double* __restrict norm = scratch + w;
    for (long m = 0; m < w; ++m) norm[m] = std::sqrt(r[m]);
    for (long m = 0; m < w; ++m) log_r[j * w + m] = std::log(norm[m]);
    for (int c = 0; c < n; ++c) {
      double* vc = v + c * w;
      for (long m = 0; m < w; ++m) vc[m] /= norm[m];
    }
  }
}

double kaplan_yorke_dimension(const std::vector<double>& sorted_exponents) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (const double e : sorted_exponents) {
    if (std::isnan(e)) return nan;
  }
  for (std::size_t i = 1; i < sorted_exponents.size(); ++i) {
    if (sorted_exponents[i] > sorted_exponents[i - 1]) {
      throw std::invalid_argument("kaplan_yorke_dimension needs exponents in descending order");
    }
  }
  double sum = 0.0;
  for (std::size_t j = 0; j < sorted_exponents.size(); ++j) {
    const double next = sum + sorted_exponents[j];
    if (next < 0.0) {
      // j exponents have a non-negative sum; the (j+1)-th makes it negative.
      return static_cast<double>(j) + sum / std::abs(sorted_exponents[j]);
    }
    sum = next;
  }
  return nan;  // the sum of all exponents given is >= 0: more are needed
}

}  // namespace chaosweep::stats
