// The fused ring kernel: one Lanes of members (integrators/lanes.hpp) at a time, all the steps of a segment, RK4 by
// fused stage sweeps around the ring (integrators/rk4_ring.hpp). For the segment these
// members' state and moment rows are copied to contiguous local buffers: rows of a wide batch
// lie a multiple of 512 bytes apart and would compete for the same cache sets. The
// accumulators are fed as the last sweep produces each site's new value:
//   a selected site:        TimeMoments::add_sample on its local row (shift set at a block's
//                           first sample, origin at the very first);
//   site_mean and energy:   Lorenz96Equations::add_site over the sites in order 0..n-1, then
//                           mean() and energy(), exactly as the model's derived() does;
//   sign regimes:           RegimeLanes (lane_regimes.hpp) on the regime observable;
//   histogram:              its observable stored to a [steps][width] buffer, counted after
//                           the segment by MemberHistogram::add_steps;
//   extremes:               every selected observable stored to a [steps][series] buffer of
//                           Lanes, folded after the segment by Extremes::add_run (add_sample
//                           on each sample in order).
// A scheduled F (spec `schedule`) is evaluated once per step for the whole batch at the stage
// times t0, t0 + dt/2 and t1, the values the generic path sets before its stages.
// Under stochastic forcing (integration.method euler-maruyama or heun) the step is sde_step():
// integrators::SdeBatch::step's operations per member, site by site, on the increments of the
// batch's own ForcingNoise (run/segment_noise.hpp), and the accumulators are fed as above.
// The same operations per member as the generic path, which the tests check bit for bit.
#include "run/ring_kernel.hpp"

#include <algorithm>
#include <cstdint>
#include <optional>
#include <vector>

#include "integrators/lanes.hpp"
#include "integrators/rk4_ring.hpp"
#include "models/lorenz96_equations.hpp"
#include "run/batch_work.hpp"
#include "run/forcing_noise.hpp"
#include "run/lane_regimes.hpp"
#include "run/schedule.hpp"
#include "run/segment_noise.hpp"

namespace chaosweep::run {
namespace {

using integrators::LaneInts;
using integrators::Lanes;
using integrators::load_lanes;
using integrators::store_lanes;
constexpr int L = integrators::kLanes;

class RingKernel final : public Kernel {
 public:
  RingKernel(const Setup& s, const Accumulators& acc, KernelMembers members)
      : eq_(models::Lorenz96Equations::from(s.parameters)),
        h_(s.dt),
        n_(eq_.n),
        width_(s.width),
        acc_(acc),
        site_series_(static_cast<std::size_t>(eq_.n), -1),
        regime_observable_(acc.regimes ? s.regime_coordinates[0] : -1),
        histogram_observable_(acc.histogram ? s.histogram_observable : -1),
        needs_derived_(s.needs_derived),
        scratch_(static_cast<std::size_t>(integrators::ring_scratch_lanes(eq_.n))),
        state_(static_cast<std::size_t>(eq_.n)),
        shift_(s.observables.size()),
        sum1_(s.observables.size()),
        sum2_(s.observables.size()),
        samples_(static_cast<std::size_t>(kMaxSegment) * s.observables.size()),
        dt_(s.dt),
        stages_(static_cast<std::size_t>(kMaxSegment)) {
    if (schedules_model(s)) schedule_.emplace(*s.schedule, s.schedule_offset);
    if (s.method != "rk4") {
      const SegmentNoise& noise = noise_.emplace(s, members);
      heun_ = sde_method(s) == integrators::SdeMethod::heun;
      multiplicative_ = sde_noise_form(s) == integrators::NoiseForm::multiplicative;
      sde_f_.resize(static_cast<std::size_t>(n_));
      sde_p_.resize(static_cast<std::size_t>(n_));
      (void)noise;
    }
    for (std::size_t o = 0; o < s.observables.size(); ++o) {
      const int i = s.observables[o];
      if (i < n_) site_series_[i] = static_cast<int>(o);
      if (i == n_) mean_series_ = static_cast<int>(o);
      if (i == n_ + 1) energy_series_ = static_cast<int>(o);
    }
    if (acc.histogram) values_.resize(static_cast<std::size_t>(kMaxSegment) * s.width);
  }

  void set_step(std::int64_t step) override { step_ = step; }

  void spin(double* x, int steps) override {
    for (int done = 0; done < steps;) {  // with noise: runs of at most kMaxSegment steps
      const int run = noise_ ? std::min(kMaxSegment, steps - done) : steps;
      prepare(run);
      for (int lane = 0; lane < width_; lane += L) {
        double* local = copy_in(x, lane);
        for (int t = 0; t < run; ++t) advance(t, lane, local, [](int, Lanes) {});
        copy_out(x, lane);
      }
      step_ += run;
      done += run;
    }
  }

  bool taps() const override { return true; }
  void tap(const int* after, int count, double* states) override {
    tap_after_ = after;
    tap_count_ = count;
    tap_states_ = states;
  }

  void accumulate(double* x, int steps) override {
    prepare(steps);
    const bool opens_block = acc_.moments->block_starts();
    const bool first = acc_.moments->count() == 0;
    for (int lane = 0; lane < width_; lane += L) {
      accumulate_lanes(x, lane, steps, opens_block, first);
    }
    acc_.moments->added(steps);
    acc_.extremes->added(steps);
    if (acc_.regimes) acc_.regimes->added(steps);
    if (acc_.histogram) acc_.histogram->add_steps(values_.data(), steps);
    tap_count_ = 0;
    step_ += steps;
  }

 private:
  /// The equations of every stage of the next `steps` steps (step_ onwards): a scheduled F
  /// evaluated at t0, t0 + dt/2 and t1 of each step (step_times, Rk4Batch::stage_time), the
  /// values the generic path's ScheduledParameter sets; the case's constant F otherwise.
  void stage_equations(int steps) {
    if (static_cast<std::size_t>(steps) > stages_.size()) stages_.resize(static_cast<std::size_t>(steps));
    for (int t = 0; t < steps; ++t) {
      integrators::StageEquations<models::Lorenz96Equations>& e = stages_[t];
      e = {eq_, eq_, eq_};
      if (!schedule_) continue;
      const StepTimes times = step_times(step_ + t, dt_);
      e.start.F = schedule_->at(integrators::Rk4Batch::stage_time(1, times.t0, times.t1, dt_));
      e.middle.F = schedule_->at(integrators::Rk4Batch::stage_time(2, times.t0, times.t1, dt_));
      e.end.F = schedule_->at(integrators::Rk4Batch::stage_time(4, times.t0, times.t1, dt_));
    }
  }

  /// The next `steps` steps' equations (RK4) or noise (stochastic steps).
  void prepare(int steps) {
    if (noise_) {
      noise_->take(step_, steps);
    } else {
      stage_equations(steps);
    }
  }

  /// Step t of the run for the Lanes at `lane` whose state is `local` (state_): RK4 or the
  /// stochastic step; on_site(k, v) gets each site's new value in site order.
  template <typename OnSite>
  void advance(int t, int lane, double* local, OnSite on_site) {
    if (noise_) {
      sde_step(t, lane, state_.data(), on_site);
    } else {
      integrators::ring_rk4_step(stages_[t], h_, n_, local, L, scratch_.data(), on_site);
    }
  }

  /// One Euler-Maruyama or Heun step of the Lanes' sites x[0 .. n-1] in place, the operations
  /// of SdeBatch::advance (integrators/sde.cpp) per member, with the noise of the run's step t:
  ///   f_k = f(x)_k, p_k = x_k + dt f_k;  p_i += a0 dw0_i (multiplicative a0 x_i dw0_i)
  ///   Euler-Maruyama: x = p.  Heun: g_k = (dt/2) (f_k + f(p)_k);  g_i += (a0/2) dw0_i, then
  ///   g_i += (a1/2) dw1_i (multiplicative (a0/2) x_i dw0_i, (a1/2) p_i dw1_i);  x += g.
  template <typename OnSite>
  void sde_step(int t, int lane, Lanes* x, OnSite on_site) {
    const models::Lorenz96Equations eq = eq_;
    const int n = n_;
    const double dt = h_.dt, half = h_.half;
    const bool multiplicative = multiplicative_;
    Lanes* const f = sde_f_.data();
    Lanes* const p = sde_p_.data();
    const SegmentNoise& noise = *noise_;
    const int rows = noise.rows();
    const int* const noisy = noise.variables().data();
    const long w = width_;
    const double* const dw0 = noise.dw0() + static_cast<long>(t) * rows * w + lane;
    const double* const dw1 = noise.dw1() + static_cast<long>(t) * rows * w + lane;
    const auto wrap = [n](int k) { return k < 0 ? k + n : (k >= n ? k - n : k); };
    const auto term = [multiplicative](double a, Lanes v, Lanes d) {
      return multiplicative ? a * v * d : a * d;
    };
    for (int k = 0; k < n; ++k) {
      f[k] = eq.site(x[wrap(k - 2)], x[wrap(k - 1)], x[k], x[wrap(k + 1)]);
      p[k] = x[k] + dt * f[k];
    }
    const double amp0 = 1.0 * noise.a0()[t];
    for (int r = 0; r < rows; ++r) {
      const int k = noisy[r];
      p[k] += term(amp0, x[k], load_lanes(dw0 + r * w));
    }
    if (!heun_) {
      for (int k = 0; k < n; ++k) {
        x[k] = p[k];
        on_site(k, x[k]);
      }
      return;
    }
    for (int k = 0; k < n; ++k) {
      const Lanes f1 = eq.site(p[wrap(k - 2)], p[wrap(k - 1)], p[k], p[wrap(k + 1)]);
      f[k] = half * (f[k] + f1);
    }
    const double h0 = 0.5 * noise.a0()[t], h1 = 0.5 * noise.a1()[t];
    for (int r = 0; r < rows; ++r) {
      const int k = noisy[r];
      f[k] += term(h0, x[k], load_lanes(dw0 + r * w));
    }
    for (int r = 0; r < rows; ++r) {
      const int k = noisy[r];
      f[k] += term(h1, p[k], load_lanes(dw1 + r * w));
    }
    for (int k = 0; k < n; ++k) {
      x[k] += f[k];
      on_site(k, x[k]);
    }
  }

  /// The Lanes' state rows [n][kLanes] in state_; returns it.
  double* copy_in(const double* x, int lane) {
    for (int k = 0; k < n_; ++k) state_[k] = load_lanes(x + static_cast<long>(k) * width_ + lane);
    return reinterpret_cast<double*>(state_.data());
  }
  void copy_out(double* x, int lane) const {
    for (int k = 0; k < n_; ++k) store_lanes(x + static_cast<long>(k) * width_ + lane, state_[k]);
  }
  void accumulate_lanes(double* x, int lane, int steps, bool opens_block, bool first);
  void fold_extremes(int lane, int steps) const;

  models::Lorenz96Equations eq_;
  integrators::Rk4Steps h_;
  int n_, width_;
  Accumulators acc_;
  std::vector<int> site_series_;  // [n]: the moments series of site k, -1 if not selected
  int mean_series_ = -1, energy_series_ = -1;
  int regime_observable_, histogram_observable_;  // observable indices, -1 when not used
  bool needs_derived_;
  std::vector<Lanes> scratch_;
  std::vector<Lanes> state_;                   // [n]: the Lanes' state during a segment
  std::vector<Lanes> shift_, sum1_, sum2_;     // [series]: their moment rows
  std::vector<Lanes> samples_;                 // [kMaxSegment][series]: the series per step
  std::vector<double> values_;  // [kMaxSegment][width]: the histogram observable per step
  std::optional<ParameterSchedule> schedule_;  // a scheduled F (the setup's schedule)
  double dt_;
  std::int64_t step_ = 0;  // the next step's index (set_step)
  std::vector<integrators::StageEquations<models::Lorenz96Equations>> stages_;  // [kMaxSegment]
  // stochastic steps: the run's noise, the scheme, and f, p per site ([n])
  std::optional<SegmentNoise> noise_;
  bool heun_ = false, multiplicative_ = false;
  std::vector<Lanes> sde_f_, sde_p_;
  // tap(): the states to record during the next accumulate()
  const int* tap_after_ = nullptr;
  int tap_count_ = 0;
  double* tap_states_ = nullptr;
};

void RingKernel::accumulate_lanes(double* x, int lane, int steps, bool opens_block, bool first) {
  const models::Lorenz96Equations eq = eq_;
  const int n = n_, regime_observable = regime_observable_;
  const int histogram_observable = histogram_observable_;
  const bool needs_derived = needs_derived_;
  const int* site_series = site_series_.data();
  const long w = width_;
  const int series = static_cast<int>(shift_.size());
  const stats::TimeMoments::Rows m = acc_.moments->rows();
  Lanes* shift = shift_.data();
  Lanes* sum1 = sum1_.data();
  Lanes* sum2 = sum2_.data();
  Lanes* samples = samples_.data();
  for (int s = 0; s < series; ++s) {
    shift[s] = load_lanes(m.shift + s * w + lane);
    sum1[s] = load_lanes(m.s1 + s * w + lane);
    sum2[s] = load_lanes(m.s2 + s * w + lane);
  }
  stats::RegimeCounter::Rows r{};
  RegimeLanes regime = {};
  if (regime_observable >= 0) {
    r = acc_.regimes->rows();
    regime.begin(r, lane);
  }
  double* local = copy_in(x, lane);
  int tapped = 0;
  for (int t = 0; t < steps; ++t) {
    const bool opens = t == 0 && opens_block;
    // one sample of series s (TimeMoments::add semantics)
    auto feed = [&](int s, Lanes v) {
      if (opens) {
        shift[s] = v;
        if (first) store_lanes(m.origin + s * w + lane, v);
      }
      stats::TimeMoments::add_sample(v, shift[s], sum1[s], sum2[s]);
      samples[t * series + s] = v;
    };
    Lanes sum = {}, squares = {}, regime_value = {}, histogram_value = {};
    advance(t, lane, local, [&](int k, Lanes v) {
      if (needs_derived) models::Lorenz96Equations::add_site(v, sum, squares);
      if (site_series[k] >= 0) feed(site_series[k], v);
      if (k == regime_observable) regime_value = v;
      if (k == histogram_observable) histogram_value = v;
    });
    if (needs_derived) {
      const Lanes mean = eq.mean(sum), energy = models::Lorenz96Equations::energy(squares);
      if (mean_series_ >= 0) feed(mean_series_, mean);
      if (energy_series_ >= 0) feed(energy_series_, energy);
      if (regime_observable == n) regime_value = mean;
      if (regime_observable == n + 1) regime_value = energy;
      if (histogram_observable == n) histogram_value = mean;
      if (histogram_observable == n + 1) histogram_value = energy;
    }
    if (regime_observable >= 0) regime.add(regime_value);
    if (histogram_observable >= 0) store_lanes(values_.data() + t * w + lane, histogram_value);
    if (tapped < tap_count_ && tap_after_[tapped] == t + 1) {
      double* out = tap_states_ + static_cast<long>(tapped) * n * w + lane;
      for (int k = 0; k < n; ++k) store_lanes(out + k * w, load_lanes(local + k * L));
      ++tapped;
    }
  }
  copy_out(x, lane);
  for (int s = 0; s < series; ++s) {
    store_lanes(m.shift + s * w + lane, shift[s]);
    store_lanes(m.s1 + s * w + lane, sum1[s]);
    store_lanes(m.s2 + s * w + lane, sum2[s]);
  }
  if (regime_observable >= 0) regime.end(r, w, lane, steps);
  fold_extremes(lane, steps);
}

// The segment's samples (samples_, [steps][series]) into the Lanes' running extremes.
void RingKernel::fold_extremes(int lane, int steps) const {
  const stats::Extremes::Rows e = acc_.extremes->rows();
  const std::int64_t first = acc_.extremes->count();
  const Lanes* const samples = samples_.data();
  const long w = width_;
  const int series = static_cast<int>(shift_.size());
  for (int s = 0; s < series; ++s) {
    const long at = s * w + lane;
    Lanes lo = load_lanes(e.min + at), hi = load_lanes(e.max + at);
    LaneInts lo_at = load_lanes(e.min_at + at), hi_at = load_lanes(e.max_at + at);
    stats::Extremes::add_run([&](int t) { return samples[t * series + s]; }, steps, first, lo,
                             lo_at, hi, hi_at);
    store_lanes(e.min + at, lo);
    store_lanes(e.max + at, hi);
    store_lanes(e.min_at + at, lo_at);
    store_lanes(e.max_at + at, hi_at);
  }
}

}  // namespace

std::unique_ptr<Kernel> make_ring_kernel(const Setup& setup, const Accumulators& acc,
                                         KernelMembers members) {
  return std::make_unique<RingKernel>(setup, acc, members);
}

}  // namespace chaosweep::run
