// One batch's integration and accumulation; see batch_runner.cpp for the time line.
#include "run/batch_work.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

namespace chaosweep::run {
namespace {

constexpr std::int64_t kFiniteCheckEvery = 32;  // steps between finiteness checks
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

}  // namespace

BatchWork::BatchWork(const Setup& setup, const models::Model& model,
                     const std::vector<double>& base, const plan::Batch& batch,
                     std::vector<double> initial)
    : setup_(setup),
      model_(model),
      base_(base),
      count_(batch.count),
      stepper_(model, setup.width),
      x_(static_cast<std::size_t>(setup.state_dim) * setup.width),
      derived_(static_cast<std::size_t>(setup.n_model_observables - setup.state_dim) * setup.width),
      non_finite_(static_cast<std::size_t>(setup.width), 0),
      moments_(static_cast<int>(setup.observables.size()), setup.width),
      regime_(static_cast<std::size_t>(setup.width), 0) {
  const int w = setup.width;
  for (int i = 0; i < setup.n_model_observables; ++i) {  // state rows, then derived rows
    const long offset = static_cast<long>(i < setup.state_dim ? i : i - setup.state_dim) * w;
    column_.push_back((i < setup.state_dim ? x_.data() : derived_.data()) + offset);
  }
  for (int i : setup.observables) selected_.push_back(column_[i]);
  for (int i : setup.regime_coordinates) regime_columns_.push_back(column_[i]);
  if (setup.regime_kind != spec::RegimeKind::none) regimes_.emplace(setup.n_regimes, w);
  if (setup.histogram) {
    histogram_.emplace(setup.histogram->bins, setup.histogram->low, setup.histogram->high, w);
  }
  result_.batch_index = batch.index;
  result_.case_index = batch.case_index;
  result_.first_member = batch.first_member;
  result_.count = batch.count;
  result_.initial_state = std::move(initial);
  const std::int64_t stored = setup.trajectory_members - batch.first_member;
  result_.trajectory_members = static_cast<int>(std::clamp<std::int64_t>(stored, 0, count_));
  result_.trajectory.assign(static_cast<std::size_t>(result_.trajectory_members) *
                                static_cast<std::size_t>(setup.trajectory_samples) *
                                static_cast<std::size_t>(setup.state_dim),
                            kNaN);
}

BatchResult BatchWork::run() {
  const Setup& s = setup_;
  load_initial_states();
  check_finite();
  sample_trajectory(0);
  for (std::int64_t step = 1; step <= s.total_steps; ++step) {
    stepper_.step(x_.data(), s.dt);
    if (step % kFiniteCheckEvery == 0 || step == s.total_steps) check_finite();
    if (step > s.spinup_steps) accumulate();
    if (s.trajectory_every > 0 && step % s.trajectory_every == 0) {
      sample_trajectory(step / s.trajectory_every);
    }
  }
  result_.status.resize(static_cast<std::size_t>(count_));
  for (int j = 0; j < count_; ++j) result_.status[j] = non_finite_[j] ? kNonFinite : kValid;
  collect_moments();
  collect_regimes();
  collect_histogram();
  return std::move(result_);
}

// Column j < count gets member j's initial state; padding columns copy member 0.
void BatchWork::load_initial_states() {
  const int w = setup_.width, d = setup_.state_dim;
  for (int m = 0; m < w; ++m) {
    const int source = m < count_ ? m : 0;
    for (int i = 0; i < d; ++i) {
      x_[static_cast<std::size_t>(i) * w + m] =
          result_.initial_state[static_cast<std::size_t>(source) * d + i];
    }
  }
}

// Flags every column with a non-finite component and resets flagged columns to the base state.
void BatchWork::check_finite() {
  const int w = setup_.width, d = setup_.state_dim;
  for (int i = 0; i < d; ++i) {
    const double* row = x_.data() + static_cast<long>(i) * w;
    for (int m = 0; m < w; ++m) non_finite_[m] |= !std::isfinite(row[m]);
  }
  for (int m = 0; m < w; ++m) {
    if (!non_finite_[m]) continue;
    for (int i = 0; i < d; ++i) x_[static_cast<std::size_t>(i) * w + m] = base_[i];
  }
}

// One accumulation step: derived observables (if used), time moments, regimes, histogram.
void BatchWork::accumulate() {
  const int w = setup_.width;
  if (setup_.needs_derived) model_.derived(x_.data(), derived_.data(), w);
  moments_.add(selected_.data());
  if (regimes_) {
    if (setup_.regime_kind == spec::RegimeKind::sign) {
      stats::classify_sign(column_[setup_.regime_coordinates[0]], w, regime_.data());
    } else {
      stats::classify_nearest(regime_columns_, setup_.centroids, w, regime_.data());
    }
    regimes_->add(regime_.data());
  }
  if (histogram_) histogram_->add(column_[setup_.histogram_observable]);
}

// trajectory[j][sample][i] = state of stored member j (NaN once the member is flagged).
void BatchWork::sample_trajectory(std::int64_t sample) {
  if (sample >= setup_.trajectory_samples) return;
  const int w = setup_.width, d = setup_.state_dim;
  for (int j = 0; j < result_.trajectory_members; ++j) {
    double* out = result_.trajectory.data() +
                  (static_cast<std::size_t>(j) * setup_.trajectory_samples + sample) * d;
    for (int i = 0; i < d; ++i) {
      out[i] = non_finite_[j] ? kNaN : x_[static_cast<std::size_t>(i) * w + j];
    }
  }
}

void BatchWork::collect_moments() {
  const int n = static_cast<int>(setup_.observables.size());
  result_.time_mean.assign(static_cast<std::size_t>(count_) * n, kNaN);
  result_.time_variance.assign(static_cast<std::size_t>(count_) * n, kNaN);
  for (int j = 0; j < count_; ++j) {
    if (non_finite_[j]) continue;
    for (int o = 0; o < n; ++o) {
      const stats::Moments m = moments_.moments(o, j);
      result_.time_mean[static_cast<std::size_t>(j) * n + o] = m.n > 0.0 ? m.mean : kNaN;
      result_.time_variance[static_cast<std::size_t>(j) * n + o] = m.variance();
    }
  }
}

void BatchWork::collect_regimes() {
  const int r = setup_.n_regimes;
  const std::size_t size = static_cast<std::size_t>(count_) * r;
  result_.regime_fraction.assign(size, kNaN);
  result_.regime_mean_residence.assign(size, kNaN);
  result_.regime_transitions.assign(static_cast<std::size_t>(count_), 0);
  if (!regimes_) return;
  for (int j = 0; j < count_; ++j) {
    if (non_finite_[j]) continue;
    for (int k = 0; k < r; ++k) {
      result_.regime_fraction[static_cast<std::size_t>(j) * r + k] = regimes_->fraction(k, j);
      result_.regime_mean_residence[static_cast<std::size_t>(j) * r + k] =
          regimes_->mean_residence(k, j, setup_.dt);
    }
    result_.regime_transitions[j] = regimes_->transitions(j);
  }
}

void BatchWork::collect_histogram() {
  if (!histogram_) return;
  result_.histogram.assign(static_cast<std::size_t>(histogram_->bins()), 0);
  for (int j = 0; j < count_; ++j) {
    if (!non_finite_[j]) histogram_->add_member_to(j, result_.histogram.data());
  }
}

}  // namespace chaosweep::run
