// Lagged-covariance sums and the response predicted from them (declared in lagged_sums.hpp).
#include "stats/lagged_sums.hpp"

#include "integrators/lanes.hpp"

#include <Eigen/Dense>

#include <cmath>
#include <limits>
#include <stdexcept>
#include <utility>

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

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


using integrators::kLanes;
using integrators::Lanes;

/// out[r][c] += sum over j = 0 .. k-1, in that order, of a[r][j] b[j][c] for the R rows from
/// `out` and the V x kLanes columns from there (a by its rows, b column by column with leading
/// dimension ldb; out with ld). Each sum is kept in a register across j: every element takes
/// exactly the
/// multiply-adds of a plain loop over j, so the tiling changes no bit.
template <int R, int V>
void product_tile(double* out, std::size_t ld, const double* const* a, const double* b,
                  std::size_t ldb, int k) {
  Lanes acc[R][V];
  for (int r = 0; r < R; ++r) {
    for (int v = 0; v < V; ++v) acc[r][v] = integrators::load_lanes(out + r * ld + v * kLanes);
  }
  for (int j = 0; j < k; ++j) {
    const double* bj = b + static_cast<std::size_t>(j) * ldb;
    Lanes bv[V];
    for (int v = 0; v < V; ++v) bv[v] = integrators::load_lanes(bj + v * kLanes);
    for (int r = 0; r < R; ++r) {
      for (int v = 0; v < V; ++v) acc[r][v] += a[r][j] * bv[v];  // a[r][j] broadcast
    }
  }
  for (int r = 0; r < R; ++r) {
    for (int v = 0; v < V; ++v) integrators::store_lanes(out + r * ld + v * kLanes, acc[r][v]);
  }
}

/// The 4 x 2-vector tile with every sum in a named register (GCC keeps an array of vectors in
/// memory); the same operations as product_tile<4, 2>.
template <>
void product_tile<4, 2>(double* out, std::size_t ld, const double* const* a,
                        const double* b, std::size_t ldb, int k) {
  using integrators::load_lanes;
  using integrators::store_lanes;
  Lanes c00 = load_lanes(out), c01 = load_lanes(out + kLanes);
  Lanes c10 = load_lanes(out + ld), c11 = load_lanes(out + ld + kLanes);
  Lanes c20 = load_lanes(out + 2 * ld), c21 = load_lanes(out + 2 * ld + kLanes);
  Lanes c30 = load_lanes(out + 3 * ld), c31 = load_lanes(out + 3 * ld + kLanes);
  for (int j = 0; j < k; ++j) {
    const double* bj = b + static_cast<std::size_t>(j) * ldb;
    const Lanes b0 = load_lanes(bj), b1 = load_lanes(bj + kLanes);
    const double a0 = a[0][j], a1 = a[1][j], a2 = a[2][j], a3 = a[3][j];
    c00 += a0 * b0;
    c01 += a0 * b1;
    c10 += a1 * b0;
    c11 += a1 * b1;
    c20 += a2 * b0;
    c21 += a2 * b1;
    c30 += a3 * b0;
    c31 += a3 * b1;
  }
  store_lanes(out, c00);
  store_lanes(out + kLanes, c01);
  store_lanes(out + ld, c10);
  store_lanes(out + ld + kLanes, c11);
  store_lanes(out + 2 * ld, c20);
  store_lanes(out + 2 * ld + kLanes, c21);
  store_lanes(out + 3 * ld, c30);
  store_lanes(out + 3 * ld + kLanes, c31);
}

/// The same for R rows and `cols` (< kLanes) columns, one double at a time.
template <int R>
void product_tail(double* out, std::size_t ld, const double* const* a, const double* b,
                  std::size_t ldb, int k, std::size_t cols) {
  for (int r = 0; r < R; ++r) {
    for (std::size_t c = 0; c < cols; ++c) {
      double v = out[r * ld + c];
      for (int j = 0; j < k; ++j) {  // a fused multiply-add, as the vector tiles contract it
        v = std::fma(a[r][j], b[static_cast<std::size_t>(j) * ldb + c], v);
      }
      out[r * ld + c] = v;
    }
  }
}

/// Rows [r, r + R) of the product, columns from `c0` to `cols`.
template <int R>
void product_rows(double* out, std::size_t ld, const double* const* a, const double* b,
                  std::size_t ldb, int k, std::size_t c0, std::size_t cols) {
  std::size_t c = c0;
  for (; c + 2 * kLanes <= cols; c += 2 * kLanes) product_tile<R, 2>(out + c, ld, a, b + c, ldb, k);
  for (; c + kLanes <= cols; c += kLanes) product_tile<R, 1>(out + c, ld, a, b + c, ldb, k);
  if (c < cols) product_tail<R>(out + c, ld, a, b + c, ldb, k, cols - c);
}

}  // namespace

// out ([rows][cols], leading dimension cols) += a b^T over k columns of the batch, a given by
// its rows (a[r][j], j < k) and b column by column ([k][ldb]); with `upper`, only the tiles that
// reach the diagonal or above it (rows equal to cols), whatever lies below the diagonal in them
// included.
void LaggedSums::add_products(double* out, std::size_t rows, std::size_t cols,
                              const double* const* a, const double* b, std::size_t ldb, int k,
                              bool upper) {
  constexpr std::size_t kRows = 4;
  std::size_t r = 0;
  const auto first_column = [&](std::size_t row) {
    return upper ? row / kLanes * kLanes : std::size_t{0};
  };
  for (; r + kRows <= rows; r += kRows) {
    product_rows<kRows>(out + r * cols, cols, a + r, b, ldb, k, first_column(r), cols);
  }
  for (; r < rows; ++r) {
    product_rows<1>(out + r * cols, cols, a + r, b, ldb, k, first_column(r), cols);
  }
}

namespace {
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
      square_(static_cast<std::size_t>(groups) * layout.dim * layout.dim, 0.0),
      xt_(layout.dim * static_cast<std::size_t>(width)),
      yt_(layout.dim * static_cast<std::size_t>(width)),
      x_rows_(layout.dim),
      a_rows_(layout.observables) {
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
  // the state column by column ([width][dim], as the history and the window hold it)
  for (std::size_t i = 0; i < d; ++i) {
    for (std::size_t j = 0; j < w; ++j) xt_[j * d + i] = x[i * w + j];
  }
  double* slot = history_.data() + static_cast<std::size_t>(k % static_cast<std::int64_t>(slots)) * d * w;
  // the window drops the sample lags + 1 back (in this slot) and takes sample k
  const bool full = k >= static_cast<std::int64_t>(slots);
  for (std::size_t i = 0; i < d * w; ++i) {
    window_[i] = (full ? window_[i] - slot[i] : window_[i]) + xt_[i];
    slot[i] = xt_[i];
  }
  // y = window - (x(k) + x(k - L)) / 2
  const bool lagged = k >= lags_;
  if (lagged) {
    const double* oldest =
        history_.data() + static_cast<std::size_t>((k + 1) % static_cast<std::int64_t>(slots)) * d * w;
    for (std::size_t i = 0; i < d * w; ++i) yt_[i] = window_[i] - 0.5 * (xt_[i] + oldest[i]);
  }
  for (const Run& run : runs_of(group_of_)) {
    double* block = blocks_.data() + static_cast<std::size_t>(run.group) * layout_.width();
    const auto first = static_cast<std::size_t>(run.first);
    const int k = run.last - run.first;
    double* sum_a = block + layout_.sum_a();
    double* sum_x = block + layout_.sum_x();
    // the factors' rows from the run's first column: the state's and the observables'
    for (std::size_t i = 0; i < d; ++i) x_rows_[i] = x + i * w + first;
    for (std::size_t o = 0; o < n_obs; ++o) a_rows_[o] = rows[o] + first;
    add_row_sums(sum_a, a_rows_.data(), n_obs, k);
    add_row_sums(sum_x, x_rows_.data(), d, k);
    double* square = square_.data() + static_cast<std::size_t>(run.group) * d * d;
    add_products(square, d, d, x_rows_.data(), xt_.data() + first * d, d, k, true);
    if (lagged) {
      add_products(block + layout_.lagged(), n_obs, d, a_rows_.data(), yt_.data() + first * d, d,
                   k, false);
    }
  }
}

// sums[r] += rows[r][0] + ... + rows[r][k-1], added in that order; several rows at a time so
// that their chains of additions overlap.
void LaggedSums::add_row_sums(double* sums, const double* const* rows, std::size_t n, int k) {
  constexpr std::size_t kChains = 8;
  std::size_t r = 0;
  for (; r + kChains <= n; r += kChains) {
    double acc[kChains];
    for (std::size_t q = 0; q < kChains; ++q) acc[q] = sums[r + q];
    for (int j = 0; j < k; ++j) {
      for (std::size_t q = 0; q < kChains; ++q) acc[q] += rows[r + q][j];
    }
    for (std::size_t q = 0; q < kChains; ++q) sums[r + q] = acc[q];
  }
  for (; r < n; ++r) {
    double acc = sums[r];
    for (int j = 0; j < k; ++j) acc += rows[r][j];
    sums[r] = acc;
  }
}

std::vector<double> LaggedSums::blocks() const {
  const std::size_t d = layout_.dim, width = layout_.width();
  std::vector<double> out = blocks_;
  for (int g = 0; g < groups_; ++g) {
    const double* square = square_.data() + static_cast<std::size_t>(g) * d * d;
    double* packed = out.data() + static_cast<std::size_t>(g) * width + layout_.sum_xx();
    for (std::size_t i = 0; i < d; ++i) {
      for (std::size_t m = i; m < d; ++m) *packed++ = square[i * d + m];
    }
  }
  return out;
}

void LaggedSums::save(const std::string& prefix, SavedState& out) const {
  out.put(prefix + "history", history_);
  out.put(prefix + "window", window_);
  out.put(prefix + "blocks", blocks_);
  out.put(prefix + "square", square_);
}

void LaggedSums::load(const std::string& prefix, SavedStateReader& in) {
  history_ = in.reals(prefix + "history", history_.size());
  window_ = in.reals(prefix + "window", window_.size());
  blocks_ = in.reals(prefix + "blocks", blocks_.size());
  square_ = in.reals(prefix + "square", square_.size());
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
