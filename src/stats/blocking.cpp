// Blocking levels and the plateau rule; see blocking.hpp for the estimator and the rule.
#include "stats/blocking.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/error.hpp"

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

}  // namespace

namespace {

/// Var(mean) estimated at one level: s_b^2 b / n, with s_b^2 the variance of its block means.
double variance_of_mean(const BlockLevel& level, double samples) {
  return level.block_means.variance() * level.block_length / samples;
}

}  // namespace

BlockingEstimate blocking_estimate(const std::vector<BlockLevel>& levels, double samples,
                                   double sample_variance) {
  BlockingEstimate e{kNaN, kNaN, kNaN, -1, false};
  if (!(samples > 0.0) || !std::isfinite(sample_variance) || sample_variance < 0.0) return e;
  std::size_t usable = 0;  // levels with enough blocks: 0 .. usable-1 (fewer blocks above)
  while (usable < levels.size() && levels[usable].block_means.n >= kMinBlocks) ++usable;
  double chosen = -1.0;  // Var(mean) of the level used
  for (std::size_t k = 0; k < usable; ++k) {
    const double var_mean = variance_of_mean(levels[k], samples);
    const double tau = var_mean * samples / (2.0 * sample_variance);
    bool plateau = levels[k].block_length >= kBlocksPerTau * tau;
    if (plateau && k + 1 < usable) {
      // the next level agrees within twice its own relative uncertainty sqrt(2 / (n - 1))
      const double next = variance_of_mean(levels[k + 1], samples);
      const double spread = next * std::sqrt(2.0 / (levels[k + 1].block_means.n - 1.0));
      plateau = std::abs(var_mean - next) <= kAgreement * spread;
    }
    if (plateau) {
      e.level = static_cast<int>(k);
      e.plateau = true;
      chosen = var_mean;
      break;
    }
  }
  if (!e.plateau) {
    for (std::size_t k = 0; k < usable; ++k) {
      const double var_mean = variance_of_mean(levels[k], samples);
      if (var_mean > chosen) {
        chosen = var_mean;
        e.level = static_cast<int>(k);
      }
    }
  }
  if (e.level < 0 || !std::isfinite(chosen)) return e;
  e.stderr_ = std::sqrt(chosen);
  if (sample_variance > 0.0) {
    e.tau_int = chosen * samples / (2.0 * sample_variance);
    e.n_eff = sample_variance / chosen;
  } else {
    // A constant series: nothing fluctuates, so nothing is correlated; count every sample.
    e.tau_int = 0.5;
    e.n_eff = samples;
  }
  return e;
}

double ensemble_mean_stderr(double across, double members, double sum_member_var) {
  if (!(members >= 1.0)) return kNaN;
  const double a = members >= 2.0 ? across / std::sqrt(members) : kNaN;
  const double b = std::sqrt(sum_member_var) / members;
  if (std::isnan(a)) return b;
  if (std::isnan(b)) return a;
  return std::max(a, b);
}

BlockedMeans::BlockedMeans(int cells, std::int64_t base_length)
    : cells_(cells), base_length_(base_length), pair_(static_cast<std::size_t>(cells)) {
  if (cells < 0 || base_length < 1) {
    throw std::invalid_argument("BlockedMeans needs cells >= 0 and a base length >= 1.");
  }
}

void BlockedMeans::add(const double* means) { push(0, means); }

// Level k takes a block mean v: Welford's update of its moments, then either v waits as the
// first half of a pair or it completes the pair whose mean goes up to level k+1.
void BlockedMeans::push(std::size_t level, const double* values) {
  const std::size_t c = static_cast<std::size_t>(cells_);
  const double* v = values;
  for (std::size_t k = level;; ++k) {
    if (k == counts_.size()) {
      counts_.push_back(0);
      has_pending_.push_back(0);
      mean_.resize(mean_.size() + c, 0.0);
      m2_.resize(m2_.size() + c, 0.0);
      pending_.resize(pending_.size() + c, 0.0);
    }
    const double n = static_cast<double>(++counts_[k]);
    double* mean = mean_.data() + k * c;
    double* m2 = m2_.data() + k * c;
    double* pending = pending_.data() + k * c;
    for (std::size_t i = 0; i < c; ++i) {
      const double d = v[i] - mean[i];
      mean[i] += d / n;
      m2[i] += d * (v[i] - mean[i]);
    }
    if (!has_pending_[k]) {
      std::copy(v, v + c, pending);
      has_pending_[k] = 1;
      return;
    }
    for (std::size_t i = 0; i < c; ++i) pair_[i] = 0.5 * (pending[i] + v[i]);
    has_pending_[k] = 0;
    v = pair_.data();
  }
}

std::vector<BlockLevel> BlockedMeans::levels(int cell) const {
  std::vector<BlockLevel> out;
  levels(cell, out);
  return out;
}

void BlockedMeans::levels(int cell, std::vector<BlockLevel>& out) const {
  out.resize(counts_.size());
  const std::size_t c = static_cast<std::size_t>(cells_);
  for (std::size_t k = 0; k < counts_.size(); ++k) {
    out[k].block_length = std::ldexp(static_cast<double>(base_length_), static_cast<int>(k));
    out[k].block_means = Moments{static_cast<double>(counts_[k]),
                                 mean_[k * c + static_cast<std::size_t>(cell)],
                                 m2_[k * c + static_cast<std::size_t>(cell)]};
  }
}

void BlockedMeans::save(const std::string& prefix, SavedState& out) const {
  const std::size_t k = counts_.size();
  std::vector<std::int64_t> levels{base_length_};
  levels.insert(levels.end(), counts_.begin(), counts_.end());
  levels.insert(levels.end(), has_pending_.begin(), has_pending_.end());
  out.put(prefix + "shape", std::vector<std::int64_t>{static_cast<std::int64_t>(k)});
  out.put(prefix + "levels", std::move(levels));
  out.put(prefix + "mean", mean_);
  out.put(prefix + "m2", m2_);
  out.put(prefix + "pending", pending_);
}

void BlockedMeans::load(const std::string& prefix, SavedStateReader& in) {
  const std::int64_t shape = in.integers(prefix + "shape", 1)[0];
  if (shape < 0 || shape > 64) {
    throw Error("the saved batch state's `" + prefix + "shape` is out of range");
  }
  const std::size_t k = static_cast<std::size_t>(shape);
  const std::vector<std::int64_t>& levels = in.integers(prefix + "levels", 1 + 2 * k);
  if (levels[0] != base_length_) {
    throw Error("the saved batch state's `" + prefix + "levels` has another base block length");
  }
  counts_.assign(levels.begin() + 1, levels.begin() + 1 + static_cast<std::ptrdiff_t>(k));
  has_pending_.assign(levels.begin() + 1 + static_cast<std::ptrdiff_t>(k), levels.end());
  for (std::size_t i = 0; i < k; ++i) {
    if (counts_[i] < 1 || (has_pending_[i] != 0 && has_pending_[i] != 1)) {
      throw Error("the saved batch state's `" + prefix + "levels` are out of range");
    }
  }
  const std::size_t size = k * static_cast<std::size_t>(cells_);
  mean_ = in.reals(prefix + "mean", size);
  m2_ = in.reals(prefix + "m2", size);
  pending_ = in.reals(prefix + "pending", size);
}

}  // namespace chaosweep::stats
