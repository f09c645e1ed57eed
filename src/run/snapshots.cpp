// Ensemble snapshots of one batch (see snapshots.hpp).
#include "run/snapshots.hpp"

#include <limits>

#include "run/batch_work.hpp"
#include "stats/ensemble.hpp"
#include "stats/regimes.hpp"

namespace chaosweep::run {

SnapshotRecorder::SnapshotRecorder(const Setup& setup, const models::Model& model, int count)
    : setup_(setup),
      model_(model),
      count_(count),
      n_obs_(static_cast<int>(setup.observables.size())),
      derived_(static_cast<std::size_t>(setup.n_model_observables - setup.state_dim) *
               setup.width),
      regime_scratch_(static_cast<std::size_t>(setup.width), 0),
      values_(static_cast<std::size_t>(setup.snapshot_count) * n_obs_ * count,
              std::numeric_limits<double>::quiet_NaN()) {
  if (setup.n_regimes > 0) regime_.assign(static_cast<std::size_t>(setup.snapshot_count) * count, -1);
}

void SnapshotRecorder::record(std::int64_t k, const double* x) {
  const Setup& s = setup_;
  if (k < 0 || k >= s.snapshot_count) return;
  const long w = s.width;
  if (s.needs_derived) model_.derived(x, derived_.data(), s.width);
  // Row of observable i: a state row of x, or a row of the derived observables.
  auto row = [&](int i) {
    return i < s.state_dim ? x + i * w : derived_.data() + (i - s.state_dim) * w;
  };
  for (int o = 0; o < n_obs_; ++o) {
    const double* v = row(s.observables[o]);
    double* out = values_.data() + (static_cast<std::size_t>(k) * n_obs_ + o) * count_;
    for (int j = 0; j < count_; ++j) out[j] = v[j];
  }
  if (regime_.empty()) return;
  if (s.regime_kind == spec::RegimeKind::sign) {
    stats::classify_sign(row(s.regime_coordinates[0]), s.width, regime_scratch_.data());
  } else {
    std::vector<const double*> coords;  // a handful of pointers, once per snapshot
    for (int i : s.regime_coordinates) coords.push_back(row(i));
    stats::classify_nearest(coords, s.centroids, s.width, regime_scratch_.data());
  }
  for (int j = 0; j < count_; ++j) {
    regime_[static_cast<std::size_t>(k) * count_ + j] = regime_scratch_[j];
  }
}

void SnapshotRecorder::save(const std::string& prefix, stats::SavedState& out) const {
  out.put(prefix + "values", values_);
  if (!regime_.empty()) out.put(prefix + "regime", regime_);
}

void SnapshotRecorder::load(const std::string& prefix, stats::SavedStateReader& in) {
  values_ = in.reals(prefix + "values", values_.size());
  if (!regime_.empty()) regime_ = in.integers(prefix + "regime", regime_.size());
}

void SnapshotRecorder::collect(const std::vector<std::uint8_t>& non_finite,
                               BatchResult& out) const {
  const std::size_t times = static_cast<std::size_t>(setup_.snapshot_count);
  const std::size_t n_reg = regime_.empty() ? 0 : static_cast<std::size_t>(setup_.n_regimes);
  out.snapshot_moments.clear();
  out.snapshot_moments.reserve(times * n_obs_ * stats::Moments::kPacked);
  out.snapshot_regimes.assign(times * n_reg, 0);
  for (std::size_t k = 0; k < times; ++k) {
    for (int o = 0; o < n_obs_; ++o) {
      const double* v = values_.data() + (k * n_obs_ + o) * count_;
      stats::Moments m;
      for (int j = 0; j < count_; ++j) {
        if (!non_finite[j]) m.add(v[j]);
      }
      m.append_to(out.snapshot_moments);
    }
    for (int j = 0; j < count_ && n_reg > 0; ++j) {
      if (non_finite[j]) continue;
      out.snapshot_regimes[k * n_reg + static_cast<std::size_t>(regime_[k * count_ + j])] += 1;
    }
  }
}

void SnapshotRecorder::collect_paired(const std::vector<std::uint8_t>& non_finite,
                                      const SnapshotRecorder* reference,
                                      const std::vector<std::uint8_t>* reference_non_finite,
                                      BatchResult& out) const {
  const std::size_t times = static_cast<std::size_t>(setup_.snapshot_count);
  out.paired_moments.clear();
  out.paired_moments.reserve(times * n_obs_ * stats::Moments::kPacked);
  for (std::size_t k = 0; k < times; ++k) {
    for (int o = 0; o < n_obs_; ++o) {
      const std::size_t row = (k * n_obs_ + o) * count_;
      stats::Moments m;
      for (int j = 0; j < count_; ++j) {
        if (non_finite[j]) continue;
        if (reference == nullptr) {
          m.add(0.0);
        } else if (!(*reference_non_finite)[j]) {
          m.add(values_[row + j] - reference->values_[row + j]);
        }
      }
      m.append_to(out.paired_moments);
    }
  }
}

}  // namespace chaosweep::run
