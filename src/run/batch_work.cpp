// One batch's integration and accumulation; see batch_runner.cpp for the time line.
#include "run/batch_work.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <utility>

#include "core/error.hpp"
#include "stats/saved_state.hpp"

namespace chaosweep::run {
namespace {

constexpr std::int64_t kFiniteCheckEvery = 32;  // steps between finiteness checks
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Series of the moments accumulator: every state variable for the fused kernel (which keeps
/// them all in registers), the selected observables otherwise.
int moment_series_count(const Setup& s) {
  return s.kernel == KernelKind::fused ? s.state_dim : static_cast<int>(s.observables.size());
}

}  // namespace

BatchWork::BatchWork(const Setup& setup, const models::Model& model,
                     const std::vector<double>& base, const plan::Batch& batch)
    : setup_(setup),
      model_(model),
      base_(base),
      count_(batch.count),
      x_(static_cast<std::size_t>(setup.state_dim) * setup.width),
      non_finite_(static_cast<std::size_t>(setup.width), 0),
      moments_(moment_series_count(setup), setup.width),
      extremes_(moment_series_count(setup), setup.width) {
  const int w = setup.width;
  for (std::size_t o = 0; o < setup.observables.size(); ++o) {
    moment_series_.push_back(setup.kernel == KernelKind::fused ? setup.observables[o]
                                                               : static_cast<int>(o));
  }
  if (setup.regime_kind != spec::RegimeKind::none) regimes_.emplace(setup.n_regimes, w);
  if (setup.histogram) {
    histogram_.emplace(setup.histogram->bins, setup.histogram->low, setup.histogram->high, w);
  }
  if (setup.snapshot_count > 0) snapshots_.emplace(setup, model, batch.count);
  kernel_ = make_kernel(setup, model,
                        {&moments_, regimes_ ? &*regimes_ : nullptr,
                         histogram_ ? &*histogram_ : nullptr, &extremes_},
                        {batch.first_member, batch.count});
  if (setup.twins.enabled()) {
    twins_.emplace(setup.twins, setup.state_dim, w, setup.key_case, batch.first_member,
                   batch.count,
                   make_kernel(setup, model, {&moments_, nullptr, nullptr},
                               {batch.first_member, batch.count}));
  }
  if (setup.paired) {  // the reference's members: their own kernel, spin-only, and snapshots
    const PairedReference& ref = *setup.paired;
    Shadow& sh = shadow_.emplace();
    sh.x.assign(x_.size(), 0.0);
    sh.non_finite.assign(static_cast<std::size_t>(w), 0);
    sh.kernel = make_kernel(ref.setup, *ref.model, {}, {batch.first_member, batch.count});
    sh.snapshots.emplace(ref.setup, *ref.model, batch.count);
  }
  if (setup.response_every > 0) {
    const auto group = [&](std::int64_t m) {
      return static_cast<int>(m * setup.response_groups / setup.members);
    };
    response_first_group_ = group(batch.first_member);
    std::vector<int> group_of(static_cast<std::size_t>(w), -1);
    for (int j = 0; j < batch.count; ++j) {
      group_of[static_cast<std::size_t>(j)] = group(batch.first_member + j) - response_first_group_;
    }
    const int groups = group(batch.first_member + batch.count - 1) - response_first_group_ + 1;
    response_.emplace(stats::LagSumsLayout{setup.observables.size(),
                                           static_cast<std::size_t>(setup.state_dim)},
                      setup.response_lags, w, std::move(group_of), groups);
    if (setup.needs_derived) {
      response_derived_.assign(
          static_cast<std::size_t>(setup.n_model_observables - setup.state_dim) * w, 0.0);
    }
    tap_response_ = kernel_->taps();
    if (tap_response_) {
      tap_after_.assign(static_cast<std::size_t>(kMaxSegment), 0);
      tap_states_.assign(static_cast<std::size_t>(kMaxSegment) * x_.size(), 0.0);
    }
  }
  result_.batch_index = batch.index;
  result_.case_index = batch.case_index;
  result_.first_member = batch.first_member;
  result_.count = batch.count;
  const std::int64_t stored = setup.trajectory_members - batch.first_member;
  result_.trajectory_members = static_cast<int>(std::clamp<std::int64_t>(stored, 0, count_));
  result_.trajectory.assign(static_cast<std::size_t>(result_.trajectory_members) *
                                static_cast<std::size_t>(setup.trajectory_samples) *
                                static_cast<std::size_t>(setup.state_dim),
                            kNaN);
}

BatchWork::BatchWork(const Setup& setup, const models::Model& model,
                     const std::vector<double>& base, const plan::Batch& batch,
                     std::vector<double> initial)
    : BatchWork(setup, model, base, batch) {
  result_.initial_state = std::move(initial);
  load_initial_states();
  if (shadow_) shadow_->x = x_;  // paired: the reference's members start from the same states
  check_finite();
  sample_trajectory(0);
  if (twins_) twins_->after_step(0, x_.data(), base_, true);
  take_snapshot(0);
  take_response_sample(0);
}

BatchWork::BatchWork(const Setup& setup, const models::Model& model,
                     const std::vector<double>& base, const plan::Batch& batch,
                     const BatchState& state)
    : BatchWork(setup, model, base, batch) {
  restore(state);
}

// Steps step_+1 .. step_+max_steps (at most to the end), in segments that end wherever
// something happens: a finiteness check (every 32 steps), a trajectory sample, the end of the
// spin-up, the end of a moments block, a twin lead. The twins take the segment's steps after
// the members (run/twins.hpp). Every event is keyed to the absolute step number, so
// chunking changes nothing.
void BatchWork::advance(std::int64_t max_steps) {
  if (finished_) throw Error("a finished batch cannot be advanced");
  const std::int64_t last =
      max_steps <= 0 ? step_ : std::min(setup_.total_steps, step_ + max_steps);
  while (step_ < last) {
    const std::int64_t end = segment_end(last);
    const int steps = static_cast<int>(end - step_);
    kernel_->set_step(step_);
    if (step_ < setup_.spinup_steps) {
      kernel_->spin(x_.data(), steps);
    } else {
      const int tapped = tap_response_samples(end);
      kernel_->accumulate(x_.data(), steps);
      for (int i = 0; i < tapped; ++i) {
        add_response_sample(step_ + tap_after_[static_cast<std::size_t>(i)],
                            tap_states_.data() + static_cast<std::size_t>(i) * x_.size());
      }
    }
    if (twins_) twins_->advance(step_, end);
    if (shadow_) {
      shadow_->kernel->set_step(step_);
      shadow_->kernel->spin(shadow_->x.data(), steps);
    }
    step_ = end;
    after_step(end);
  }
}

// The last step of the segment that starts after step_: no event strictly inside it.
std::int64_t BatchWork::segment_end(std::int64_t last) const {
  const Setup& s = setup_;
  std::int64_t end = std::min(last, (step_ / kFiniteCheckEvery + 1) * kFiniteCheckEvery);
  if (s.trajectory_every > 0) {
    end = std::min(end, (step_ / s.trajectory_every + 1) * s.trajectory_every);
  }
  if (twins_) end = std::min(end, twins_->next_event(step_));
  if (step_ < s.spinup_steps) return std::min(end, s.spinup_steps);
  const std::int64_t since = step_ - s.spinup_steps;
  if (s.snapshot_every > 0) {
    end = std::min(end, s.spinup_steps + (since / s.snapshot_every + 1) * s.snapshot_every);
  }
  if (s.response_every > 0 && !tap_response_) {
    end = std::min(end, s.spinup_steps + (since / s.response_every + 1) * s.response_every);
  }
  end = std::min(end, step_ + kMaxSegment);
  return std::min(end, step_ + moments_.block_room());
}

// Events at the end of step `step`: finiteness check, trajectory sample, twins (start, lead),
// snapshot.
void BatchWork::after_step(std::int64_t step) {
  const Setup& s = setup_;
  const bool check = step % kFiniteCheckEvery == 0 || step == s.total_steps;
  if (check) check_finite();
  if (s.trajectory_every > 0 && step % s.trajectory_every == 0) {
    sample_trajectory(step / s.trajectory_every);
  }
  if (twins_) twins_->after_step(step, x_.data(), base_, check);
  take_snapshot(step);
  take_response_sample(step);
}

// Whether step `step` (of the accumulation) takes a response sample.
bool BatchWork::response_sample_at(std::int64_t step) const {
  const Setup& s = setup_;
  if (!response_ || step < s.spinup_steps) return false;
  const std::int64_t since = step - s.spinup_steps;
  return since % s.response_every == 0 && since / s.response_every < s.response_samples;
}

// With a kernel that records states inside its run of steps: the response samples strictly
// inside (step_, end), handed to the kernel; returns how many (the one at `end` is after_step's).
int BatchWork::tap_response_samples(std::int64_t end) {
  if (!tap_response_) return 0;
  const std::int64_t every = setup_.response_every;
  const std::int64_t since = step_ - setup_.spinup_steps;
  int count = 0;
  for (std::int64_t s = setup_.spinup_steps + (since / every + 1) * every; s < end; s += every) {
    if (!response_sample_at(s)) break;
    tap_after_[static_cast<std::size_t>(count++)] = static_cast<int>(s - step_);
  }
  kernel_->tap(tap_after_.data(), count, tap_states_.data());
  return count;
}

// Response sample k at step spinup_steps + k * response_every (as the snapshots).
void BatchWork::take_response_sample(std::int64_t step) {
  if (response_sample_at(step)) add_response_sample(step, x_.data());
}

void BatchWork::add_response_sample(std::int64_t step, const double* x) {
  const Setup& s = setup_;
  const int w = s.width;
  if (s.needs_derived) model_.derived(x, response_derived_.data(), w);
  std::vector<const double*> rows;
  rows.reserve(s.observables.size());
  for (int i : s.observables) {
    rows.push_back(i < s.state_dim
                       ? x + static_cast<std::size_t>(i) * w
                       : response_derived_.data() + static_cast<std::size_t>(i - s.state_dim) * w);
  }
  response_->add((step - s.spinup_steps) / s.response_every, x, rows);
}

// The batch's response sums in the campaign's [group][sums] layout, with each group's member
// count; all 0 when a member became non-finite (its earlier samples are in the sums).
void BatchWork::collect_response() {
  const Setup& s = setup_;
  if (!response_) return;
  const stats::LagSumsLayout& layout = response_->layout();
  const std::size_t width = layout.width();
  result_.response_sums.assign(static_cast<std::size_t>(s.response_groups) * width, 0.0);
  for (int j = 0; j < count_; ++j) {
    if (non_finite_[j]) return;
  }
  const std::vector<double>& blocks = response_->blocks();
  const std::size_t local = blocks.size() / width;
  for (std::size_t g = 0; g < local; ++g) {
    std::copy(blocks.begin() + static_cast<std::ptrdiff_t>(g * width),
              blocks.begin() + static_cast<std::ptrdiff_t>((g + 1) * width),
              result_.response_sums.begin() +
                  static_cast<std::ptrdiff_t>((response_first_group_ + g) * width));
  }
  for (int j = 0; j < count_; ++j) {
    const std::int64_t m = result_.first_member + j;
    const auto g = static_cast<std::size_t>(m * s.response_groups / s.members);
    result_.response_sums[g * width + layout.members()] += 1.0;
  }
}

// Snapshot k at step spinup_steps + k * snapshot_every (step 0 itself when there is no
// spin-up: the initial states).
void BatchWork::take_snapshot(std::int64_t step) {
  const Setup& s = setup_;
  if (!snapshots_ || step < s.spinup_steps) return;
  const std::int64_t since = step - s.spinup_steps;
  if (since % s.snapshot_every != 0) return;
  snapshots_->record(since / s.snapshot_every, x_.data());
  if (shadow_) shadow_->snapshots->record(since / s.snapshot_every, shadow_->x.data());
}

BatchResult BatchWork::finish() {
  if (!done()) throw Error("a batch was finished before its last step");
  if (finished_) throw Error("a batch was finished twice");
  finished_ = true;
  result_.status.resize(static_cast<std::size_t>(count_));
  for (int j = 0; j < count_; ++j) result_.status[j] = non_finite_[j] ? kNonFinite : kValid;
  collect_moments();
  collect_extremes();
  collect_regimes();
  collect_histogram();
  if (twins_) twins_->finish(non_finite_, setup_.dt, result_);
  if (snapshots_) snapshots_->collect(non_finite_, result_);
  collect_response();
  if (snapshots_ && setup_.paired_snapshots) {
    if (shadow_) {
      snapshots_->collect_paired(non_finite_, &*shadow_->snapshots, &shadow_->non_finite,
                                 result_);
    } else if (setup_.case_index == setup_.key_case) {  // the reference: differences of 0
      snapshots_->collect_paired(non_finite_, nullptr, nullptr, result_);
    } else {  // no reference in the plan (a timing piece): no differences (n = 0)
      result_.paired_moments.clear();
      const std::size_t n = static_cast<std::size_t>(setup_.snapshot_count) *
                            setup_.observables.size();
      for (std::size_t i = 0; i < n; ++i) stats::Moments().append_to(result_.paired_moments);
    }
  }
  return std::move(result_);
}

// Names of the saved arrays (stable: checkpoints store them). Member states and flags are
// full width (padding columns included), so a resumed batch is bitwise the uninterrupted one.
BatchState BatchWork::save() const {
  if (finished_) throw Error("a finished batch has no state to save");
  stats::SavedState out;
  out.put("state", x_);
  out.put("initial_state", result_.initial_state);
  out.put("trajectory", result_.trajectory);
  out.put("non_finite", std::vector<std::int64_t>(non_finite_.begin(), non_finite_.end()));
  moments_.save("moments.", out);
  extremes_.save("extremes.", out);
  if (regimes_) regimes_->save("regimes.", out);
  if (histogram_) histogram_->save("histogram.", out);
  if (twins_) twins_->save(out);
  if (snapshots_) snapshots_->save("snapshots.", out);
  if (response_) response_->save("response.", out);
  if (shadow_) {
    out.put("paired.state", shadow_->x);
    out.put("paired.non_finite",
            std::vector<std::int64_t>(shadow_->non_finite.begin(), shadow_->non_finite.end()));
    shadow_->snapshots->save("paired.snapshots.", out);
  }
  BatchState state;
  state.batch_index = result_.batch_index;
  state.step = step_;
  state.reals = std::move(out.reals);
  state.integers = std::move(out.integers);
  return state;
}

void BatchWork::restore(const BatchState& state) {
  const std::size_t w = static_cast<std::size_t>(setup_.width);
  const std::size_t d = static_cast<std::size_t>(setup_.state_dim);
  if (state.batch_index != result_.batch_index) {
    throw Error("the saved state belongs to batch " + std::to_string(state.batch_index) +
                ", not to batch " + std::to_string(result_.batch_index));
  }
  if (state.step < 0 || state.step > setup_.total_steps) {
    throw Error("the saved state of batch " + std::to_string(state.batch_index) +
                " is at step " + std::to_string(state.step) + ", outside 0 .. " +
                std::to_string(setup_.total_steps));
  }
  stats::SavedStateReader in(state.reals, state.integers);
  x_ = in.reals("state", d * w);
  result_.initial_state = in.reals("initial_state", static_cast<std::size_t>(count_) * d);
  result_.trajectory = in.reals("trajectory", result_.trajectory.size());
  const std::vector<std::int64_t>& flags = in.integers("non_finite", w);
  for (std::size_t m = 0; m < w; ++m) non_finite_[m] = flags[m] != 0;
  moments_.load("moments.", in);
  extremes_.load("extremes.", in);
  if (regimes_) regimes_->load("regimes.", in);
  if (histogram_) histogram_->load("histogram.", in);
  if (twins_) twins_->load(in);
  if (snapshots_) snapshots_->load("snapshots.", in);
  if (response_) response_->load("response.", in);
  if (shadow_) {
    shadow_->x = in.reals("paired.state", d * w);
    const std::vector<std::int64_t>& paired_flags = in.integers("paired.non_finite", w);
    for (std::size_t m = 0; m < w; ++m) shadow_->non_finite[m] = paired_flags[m] != 0;
    shadow_->snapshots->load("paired.snapshots.", in);
  }
  in.finish();
  step_ = state.step;
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
  flag_non_finite_columns(x_.data(), setup_.state_dim, setup_.width, base_, non_finite_);
  if (shadow_) {
    flag_non_finite_columns(shadow_->x.data(), setup_.state_dim, setup_.width, base_,
                            shadow_->non_finite);
  }
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
  result_.time_mean_stderr.assign(static_cast<std::size_t>(count_) * n, kNaN);
  result_.time_mean_tau.assign(static_cast<std::size_t>(count_) * n, kNaN);
  result_.time_mean_samples.assign(static_cast<std::size_t>(count_) * n, kNaN);
  std::vector<stats::BlockLevel> levels;
  for (int j = 0; j < count_; ++j) {
    if (non_finite_[j]) continue;
    for (int o = 0; o < n; ++o) {
      const std::size_t i = static_cast<std::size_t>(j) * n + o;
      const stats::Moments m = moments_.moments(moment_series_[o], j);
      result_.time_mean[i] = m.n > 0.0 ? m.mean : kNaN;
      result_.time_variance[i] = m.variance();
      // one sample per step: tau_int in steps times dt is tau_int in model time units
      const stats::BlockingEstimate e = moments_.standard_error(moment_series_[o], j, m, levels);
      result_.time_mean_stderr[i] = e.stderr_;
      result_.time_mean_tau[i] = e.tau_int * setup_.dt;
      result_.time_mean_samples[i] = e.n_eff;
    }
  }
}

// Sample k of the accumulation is taken after step spinup_steps + 1 + k; its time is that step
// times dt, the formula of the snapshot times. A series that never compared (extremes.hpp)
// has no sample to report.
void BatchWork::collect_extremes() {
  const int n = static_cast<int>(setup_.observables.size());
  const std::size_t size = static_cast<std::size_t>(count_) * n;
  result_.extreme_min.assign(size, kNaN);
  result_.extreme_max.assign(size, kNaN);
  result_.extreme_min_time.assign(size, kNaN);
  result_.extreme_max_time.assign(size, kNaN);
  auto time_of = [&](std::int64_t sample) {
    return static_cast<double>(setup_.spinup_steps + 1 + sample) * setup_.dt;
  };
  for (int j = 0; j < count_; ++j) {
    if (non_finite_[j]) continue;
    for (int o = 0; o < n; ++o) {
      const std::size_t i = static_cast<std::size_t>(j) * n + o;
      const int series = moment_series_[o];
      if (extremes_.min_at(series, j) >= 0) {
        result_.extreme_min[i] = extremes_.min(series, j);
        result_.extreme_min_time[i] = time_of(extremes_.min_at(series, j));
      }
      if (extremes_.max_at(series, j) >= 0) {
        result_.extreme_max[i] = extremes_.max(series, j);
        result_.extreme_max_time[i] = time_of(extremes_.max_at(series, j));
      }
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
