// Lagged-covariance sums and the response predicted from them (declared in lagged_sums.hpp).
#include "stats/lagged_sums.hpp"

#include <Eigen/Dense>

#include <cmath>
#include <limits>
#include <stdexcept>
#include <utility>

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
/// Columns whose products are added while a sum stays in a register.
constexpr int kColumnBlock = 4;

/// Columns [first, last) of group g: the groups' columns are contiguous and in group order.
struct Run {
  int group, first, last;
};

std::vector<Run> runs_of(const std::vector<int>& group_of) {
  std::vector<Run> runs;
  for (int j = 0; j < static_cast<int>(group_of.size()); ++j) {
    const int g = group_of[static_cast<std::size_t>(j)];
    if (g < 0) continue;
    if (!runs.empty() && runs.back().group == g && runs.back().last == j) {
      ++runs.back().last;
    } else {
      runs.push_back({g, j, j + 1});
    }
  }
  return runs;
}

}  // namespace

LaggedSums::LaggedSums(LagSumsLayout layout, int lags, int width, std::vector<int> group_of,
                       int groups)
    : layout_(layout),
      lags_(lags),
      width_(width),
      groups_(groups),
      group_of_(std::move(group_of)),
      history_(static_cast<std::size_t>(lags + 1) * layout.dim * static_cast<std::size_t>(width)),
      window_(layout.dim * static_cast<std::size_t>(width), 0.0),
      blocks_(static_cast<std::size_t>(groups) * layout.width(), 0.0),
      xt_(layout.dim * static_cast<std::size_t>(width)),
      yt_(layout.dim * static_cast<std::size_t>(width)),
      at_(layout.observables * static_cast<std::size_t>(width)) {
  if (lags < 1 || static_cast<int>(group_of_.size()) != width) {
    throw std::invalid_argument("LaggedSums needs at least one lag and a group per column");
  }
  for (int g : group_of_) {
    if (g >= groups) throw std::invalid_argument("LaggedSums: a column's group is out of range");
  }
}

void LaggedSums::add(std::int64_t k, const double* x, const std::vector<const double*>& rows) {
  const std::size_t d = layout_.dim, n_obs = layout_.observables;
  const std::size_t w = static_cast<std::size_t>(width_);
  const std::size_t slots = static_cast<std::size_t>(lags_) + 1;
  double* slot = history_.data() + static_cast<std::size_t>(k % static_cast<std::int64_t>(slots)) * d * w;
  // the window drops the sample lags + 1 back (in this slot) and takes sample k
  const bool full = k >= static_cast<std::int64_t>(slots);
  for (std::size_t i = 0; i < d * w; ++i) {
    window_[i] = (full ? window_[i] - slot[i] : window_[i]) + x[i];
    slot[i] = x[i];
  }
  const bool lagged = k >= lags_;
  const double* oldest = history_.data() +
                         static_cast<std::size_t>((k + 1) % static_cast<std::int64_t>(slots)) * d * w;
  // column-major copies: x, y = window - (x(k) + x(k - L)) / 2, and the observables
  for (std::size_t i = 0; i < d; ++i) {
    for (std::size_t j = 0; j < w; ++j) {
      const std::size_t at = i * w + j;
      xt_[j * d + i] = x[at];
      if (lagged) yt_[j * d + i] = window_[at] - 0.5 * (x[at] + oldest[at]);
    }
  }
  for (std::size_t o = 0; o < n_obs; ++o) {
    for (std::size_t j = 0; j < w; ++j) at_[j * n_obs + o] = rows[o][j];
  }
  for (const Run& run : runs_of(group_of_)) {
    double* block = blocks_.data() + static_cast<std::size_t>(run.group) * layout_.width();
    int j = run.first;
    for (; j + kColumnBlock <= run.last; j += kColumnBlock) {
      add_columns<kColumnBlock>(j, lagged, block);
    }
    for (; j < run.last; ++j) add_columns<1>(j, lagged, block);
  }
}

// Columns j .. j+B-1 into `block`. Every sum takes the columns one after another in column
// order, exactly as B = 1 column at a time would: the blocking only keeps a sum in a register
// across the B columns, so results do not depend on B.
template <int B>
void LaggedSums::add_columns(int j, bool lagged, double* block) {
  const std::size_t d = layout_.dim, n_obs = layout_.observables;
  const double* xs[B];
  const double* ys[B];
  const double* as[B];
  for (int b = 0; b < B; ++b) {
    xs[b] = xt_.data() + static_cast<std::size_t>(j + b) * d;
    ys[b] = yt_.data() + static_cast<std::size_t>(j + b) * d;
    as[b] = at_.data() + static_cast<std::size_t>(j + b) * n_obs;
  }
  double* sum_a = block + layout_.sum_a();
  double* sum_x = block + layout_.sum_x();
  for (std::size_t o = 0; o < n_obs; ++o) {
    double v = sum_a[o];
    for (int b = 0; b < B; ++b) v += as[b][o];
    sum_a[o] = v;
  }
  for (std::size_t i = 0; i < d; ++i) {
    double v = sum_x[i];
    for (int b = 0; b < B; ++b) v += xs[b][i];
    sum_x[i] = v;
  }
  double* row = block + layout_.sum_xx();
  for (std::size_t i = 0; i < d; ++i) {
    double xi[B];
    for (int b = 0; b < B; ++b) xi[b] = xs[b][i];
    for (std::size_t m = i; m < d; ++m) {
      double v = row[m - i];
      for (int b = 0; b < B; ++b) v += xi[b] * xs[b][m];
      row[m - i] = v;
    }
    row += d - i;
  }
  if (!lagged) return;
  double* lag = block + layout_.lagged();
  for (std::size_t o = 0; o < n_obs; ++o) {
    double a[B];
    for (int b = 0; b < B; ++b) a[b] = as[b][o];
    double* out = lag + o * d;
    for (std::size_t i = 0; i < d; ++i) {
      double v = out[i];
      for (int b = 0; b < B; ++b) v += a[b] * ys[b][i];
      out[i] = v;
    }
  }
}

void LaggedSums::save(const std::string& prefix, SavedState& out) const {
  out.put(prefix + "history", history_);
  out.put(prefix + "window", window_);
  out.put(prefix + "blocks", blocks_);
}

void LaggedSums::load(const std::string& prefix, SavedStateReader& in) {
  history_ = in.reals(prefix + "history", history_.size());
  window_ = in.reals(prefix + "window", window_.size());
  blocks_ = in.reals(prefix + "blocks", blocks_.size());
}

namespace {

/// The prediction from the summed blocks `total` ([layout.width()]), [forcing][observable].
std::vector<double> predict_from(const LagSumsLayout& layout, const std::vector<double>& total,
                                 int lags, std::int64_t samples, double every,
                                 const std::vector<std::vector<double>>& directions) {
  const auto d = static_cast<Eigen::Index>(layout.dim);
  const auto n_obs = static_cast<Eigen::Index>(layout.observables);
  std::vector<double> out(directions.size() * layout.observables, kNaN);
  const double n = total[layout.members()];
  if (!(n >= 1.0)) return out;
  const double all = n * static_cast<double>(samples);
  const double later = n * static_cast<double>(samples - lags);
  Eigen::VectorXd mean_a(n_obs), mean_x(d);
  for (Eigen::Index o = 0; o < n_obs; ++o) mean_a(o) = total[layout.sum_a() + o] / all;
  for (Eigen::Index i = 0; i < d; ++i) mean_x(i) = total[layout.sum_x() + i] / all;
  Eigen::MatrixXd c0(d, d);
  std::size_t at = layout.sum_xx();
  for (Eigen::Index i = 0; i < d; ++i) {
    for (Eigen::Index j = i; j < d; ++j) {
      c0(i, j) = c0(j, i) = total[at++] / all - mean_x(i) * mean_x(j);
    }
  }
  Eigen::MatrixXd g(n_obs, d);
  for (Eigen::Index o = 0; o < n_obs; ++o) {
    for (Eigen::Index i = 0; i < d; ++i) {
      g(o, i) = every * (total[layout.lagged() + static_cast<std::size_t>(o * d + i)] / later -
                         lags * mean_a(o) * mean_x(i));
    }
  }
  const Eigen::LLT<Eigen::MatrixXd> llt(c0);
  if (llt.info() != Eigen::Success) return out;
  // a nearly singular C(0) (a state variable that hardly varies) gives no usable inverse
  const Eigen::VectorXd diag = c0.diagonal();
  const Eigen::MatrixXd l = llt.matrixL();
  const double ratio = l.diagonal().minCoeff() / l.diagonal().maxCoeff();
  if (!(ratio > 1e-7) || !(diag.minCoeff() > 0.0)) return out;
  for (std::size_t p = 0; p < directions.size(); ++p) {
    const Eigen::Map<const Eigen::VectorXd> e(directions[p].data(), d);
    const Eigen::VectorXd response = g * llt.solve(e);
    for (Eigen::Index o = 0; o < n_obs; ++o) {
      out[p * layout.observables + static_cast<std::size_t>(o)] = response(o);
    }
  }
  return out;
}

}  // namespace

PredictedResponse predict_response(const LagSumsLayout& layout, const double* blocks, int groups,
                                   int lags, std::int64_t samples, double every,
                                   const std::vector<std::vector<double>>& directions) {
  for (const std::vector<double>& e : directions) {
    if (e.size() != layout.dim) throw std::invalid_argument("a forcing direction has the wrong size");
  }
  if (samples <= lags) throw std::invalid_argument("predict_response needs more samples than lags");
  const std::size_t width = layout.width();
  std::vector<double> total(width, 0.0);
  for (int g = 0; g < groups; ++g) {
    for (std::size_t i = 0; i < width; ++i) total[i] += blocks[static_cast<std::size_t>(g) * width + i];
  }
  PredictedResponse r;
  r.slope = predict_from(layout, total, lags, samples, every, directions);
  r.stderr_.assign(r.slope.size(), kNaN);
  // delete-one-group jackknife over the groups that hold members
  std::vector<std::vector<double>> left_out;
  for (int g = 0; g < groups; ++g) {
    const double* block = blocks + static_cast<std::size_t>(g) * width;
    if (!(block[layout.members()] > 0.0)) continue;
    std::vector<double> rest(width);
    for (std::size_t i = 0; i < width; ++i) rest[i] = total[i] - block[i];
    left_out.push_back(predict_from(layout, rest, lags, samples, every, directions));
  }
  const std::size_t k = left_out.size();
  if (k < 2) return r;
  for (std::size_t i = 0; i < r.slope.size(); ++i) {
    double mean = 0.0;
    for (const auto& v : left_out) mean += v[i];
    mean /= static_cast<double>(k);
    double ss = 0.0;
    for (const auto& v : left_out) ss += (v[i] - mean) * (v[i] - mean);
    r.stderr_[i] = std::sqrt(static_cast<double>(k - 1) / static_cast<double>(k) * ss);
  }
  return r;
}

}  // namespace chaosweep::stats
