// The fused kernel: RK4 and every per-step accumulator update on Lanes (kLanes members, one
// SIMD register: integrators/lanes.hpp), with G Lanes interleaved so that independent dependency chains keep the FMA pipelines busy, and the
// state and running sums held in local variables (registers) for a whole segment of steps.
//
// Per step and Lane, after the RK4 step (integrators/rk4_step.hpp, the model's equations):
//   moments, every state variable i:  TimeMoments::add_sample(x_i, shift_i, s1_i, s2_i)
//     (at the first sample of a block shift_i = x_i, at the very first also origin_i = x_i)
//   sign regimes of state variable r:  regime = 0 if x_r >= 0 else 1 (NaN -> 1), then the
//     RegimeCounter update (regimes.hpp) in 64-bit integer Lanes
//   histogram of state variable h:     x_h stored to a [steps][width] buffer, counted after
//     the segment by MemberHistogram::add_steps
//   extremes, every state variable i:  x_i stored to the group's [steps][G][D] buffer of
//     Lanes; after the segment Extremes::fold (a min and a max per sample, every series side
//     by side) and merge_run (the sample index searched only where a running extreme is
//     beaten), which together are Extremes::add_sample on each sample in order
// exactly the operations of the generic path, so both give the same bits.
#include "run/fused_kernel.hpp"

#include <cstdint>
#include <optional>
#include <vector>

#include "core/error.hpp"

#include "integrators/lanes.hpp"
#include "integrators/rk4_step.hpp"
#include "models/lorenz63_equations.hpp"
#include "models/lorenz84_equations.hpp"
#include "run/batch_work.hpp"
#include "run/lane_regimes.hpp"
#include "run/schedule.hpp"

namespace chaosweep::run {
namespace {

using integrators::LaneInts;
using integrators::Lanes;
using integrators::load_lanes;
using integrators::store_lanes;
constexpr int L = integrators::kLanes;

/// Lanes interleaved per group, measured best (docs/performance.md): spin-up has only the state
/// to keep in registers (4 chains); with the accumulators, AVX-512's 32 registers hold 3 chains
/// (2 leave the FMA pipelines waiting on the RK4 dependency chain, 4 spill more running sums
/// than they gain), while with 16 registers (AVX2, SSE2) 4 chains win despite spilling. Lanes
/// left over at the end of a batch go in groups of 2 and 1.
constexpr int kSpinGroup = 4;
#if defined(__AVX512F__)
constexpr int kAccumulateGroup = 3;
#else
constexpr int kAccumulateGroup = 4;
#endif

/// x[row] for a row known only at run time (the same row for every step: a predictable branch).
template <int D>
inline Lanes pick(const Lanes (&x)[D], int row) {
  Lanes v = x[0];
  for (int i = 1; i < D; ++i) {
    if (row == i) v = x[i];
  }
  return v;
}

/// Scratch rows of the fused kernels, one set per thread, reused by every kernel: a kernel is
/// made per batch, and allocating (and zeroing) fresh rows for each short batch cost about a
/// fifth of its time. Every call writes the rows it reads within itself, so kernels that take
/// turns on one thread may share them.
Lanes* sample_scratch(std::size_t n) {
  static thread_local std::vector<Lanes> rows;
  if (rows.size() < n) rows.resize(n);
  return rows.data();
}

double* value_scratch(std::size_t n) {
  static thread_local std::vector<double> rows;
  if (rows.size() < n) rows.resize(n);
  return rows.data();
}

template <typename Equations>
class FusedKernel final : public Kernel {
  static constexpr int D = Equations::kDim;

 public:
  FusedKernel(const Equations& eq, const Setup& s, const Accumulators& acc)
      : eq_(eq), h_(s.dt), width_(s.width), acc_(acc),
        regime_row_(acc.regimes ? s.regime_coordinates[0] : -1),
        histogram_row_(acc.histogram ? s.histogram_observable : -1),
        dt_(s.dt) {
    if (acc.histogram) values_ = value_scratch(static_cast<std::size_t>(kMaxSegment) * s.width);
    samples_ = sample_scratch(static_cast<std::size_t>(kMaxSegment) * kAccumulateGroup * D);
    if (s.schedule) {
      slot_ = Equations::slot(s.schedule->parameter);
      if (slot_ < 0) throw Error("the fused kernel cannot schedule " + s.schedule->parameter);
      schedule_.emplace(*s.schedule, s.schedule_offset);
    }
  }

  void set_step(std::int64_t step) override { step_ = step; }

  void spin(double* x, int steps) override {
    if (schedule_) {
      stage_equations(steps);
      spin_groups<true>(x, steps);
    } else {
      spin_groups<false>(x, steps);
    }
    step_ += steps;
  }

  void accumulate(double* x, int steps) override {
    if (schedule_) {
      stage_equations(steps);
      accumulate_groups<true>(x, steps);
    } else {
      accumulate_groups<false>(x, steps);
    }
    step_ += steps;
  }

 private:
  template <bool Scheduled>
  void spin_groups(double* x, int steps) {
    int lane = 0;
    for (; lane + kSpinGroup * L <= width_; lane += kSpinGroup * L) {
      spin_group<kSpinGroup, Scheduled>(x, lane, steps);
    }
    for (; lane + 2 * L <= width_; lane += 2 * L) spin_group<2, Scheduled>(x, lane, steps);
    for (; lane < width_; lane += L) spin_group<1, Scheduled>(x, lane, steps);
  }

  template <bool Scheduled>
  void accumulate_groups(double* x, int steps) {
    stats::TimeMoments& moments = *acc_.moments;
    const bool opens_block = moments.block_starts();
    const bool first = moments.count() == 0;
    int lane = 0;
    for (; lane + kAccumulateGroup * L <= width_; lane += kAccumulateGroup * L) {
      accumulate_group<kAccumulateGroup, Scheduled>(x, lane, steps, opens_block, first);
    }
    for (; lane + 2 * L <= width_; lane += 2 * L) {
      accumulate_group<2, Scheduled>(x, lane, steps, opens_block, first);
    }
    for (; lane < width_; lane += L) {
      accumulate_group<1, Scheduled>(x, lane, steps, opens_block, first);
    }
    moments.added(steps);
    acc_.extremes->added(steps);
    if (acc_.regimes) acc_.regimes->added(steps);
    if (acc_.histogram) acc_.histogram->add_steps(values_, steps);
  }

  /// The equations of every stage of the next `steps` steps (step_ onwards) under the schedule:
  /// the parameter at t0, t0 + dt/2 and t1 of each step (step_times, Rk4Batch::stage_time), set
  /// by Equations::set as the generic path's ScheduledParameter sets it in the model.
  void stage_equations(int steps) {
    if (static_cast<std::size_t>(steps) > stages_.size()) stages_.resize(static_cast<std::size_t>(steps));
    for (int t = 0; t < steps; ++t) {
      const StepTimes times = step_times(step_ + t, dt_);
      Stages& e = stages_[static_cast<std::size_t>(t)];
      e = {eq_, eq_, eq_};
      e.start.set(slot_, schedule_->at(integrators::Rk4Batch::stage_time(1, times.t0, times.t1, dt_)));
      e.middle.set(slot_, schedule_->at(integrators::Rk4Batch::stage_time(2, times.t0, times.t1, dt_)));
      e.end.set(slot_, schedule_->at(integrators::Rk4Batch::stage_time(4, times.t0, times.t1, dt_)));
    }
  }

  /// Step t of the G members' states of a group: the constant equations, or step t's stages.
  template <int G, bool Scheduled>
  void step_group(const Equations& eq, const integrators::Rk4Steps& h, int t,
                  Lanes (&s)[G][D]) const {
    for (int g = 0; g < G; ++g) {
      if constexpr (Scheduled) {
        const Stages& e = stages_[static_cast<std::size_t>(t)];
        integrators::rk4_step<D>(e.start, e.middle, e.end, h, s[g]);
      } else {
        (void)t;
        integrators::rk4_step<D>(eq, h, s[g]);
      }
    }
  }

  long row(int i) const { return static_cast<long>(i) * width_; }  // offset of state row i
  template <int G>
  void load_state(const double* x, int lane, Lanes (&s)[G][D]) const {
    for (int g = 0; g < G; ++g) {
      for (int i = 0; i < D; ++i) s[g][i] = load_lanes(x + row(i) + lane + g * L);
    }
  }
  template <int G>
  void store_state(double* x, int lane, const Lanes (&s)[G][D]) const {
    for (int g = 0; g < G; ++g) {
      for (int i = 0; i < D; ++i) store_lanes(x + row(i) + lane + g * L, s[g][i]);
    }
  }

  template <int G, bool Scheduled>
  void spin_group(double* x, int lane, int steps) const {
    const Equations eq = eq_;
    const integrators::Rk4Steps h = h_;
    Lanes s[G][D];
    load_state(x, lane, s);
    for (int t = 0; t < steps; ++t) {
      step_group<G, Scheduled>(eq, h, t, s);
    }
    store_state(x, lane, s);
  }

  template <int G, bool Scheduled>
  void accumulate_group(double* x, int lane, int steps, bool opens_block, bool first);
  template <int G>
  void fold_extremes(int lane, int steps) const;

  Equations eq_;
  integrators::Rk4Steps h_;
  int width_;
  Accumulators acc_;
  int regime_row_, histogram_row_;  // state rows, -1 when not used
  double* values_ = nullptr;  // [kMaxSegment][width]: the histogram observable per step
  Lanes* samples_ = nullptr;  // [kMaxSegment][G][D]: the group's state per step (scratch rows)
  // a scheduled parameter (Setup::schedule): its slot in Equations, its values, the step count
  struct Stages {
    Equations start, middle, end;
  };
  std::optional<ParameterSchedule> schedule_;
  int slot_ = -1;
  double dt_;
  std::int64_t step_ = 0;
  std::vector<Stages> stages_;  // [steps of the current run]
};

template <typename Equations>
template <int G, bool Scheduled>
void FusedKernel<Equations>::accumulate_group(double* x, int lane, int steps, bool opens_block,
                                              bool first) {
  // locals, so that stores through the row pointers cannot be taken to change them
  const Equations eq = eq_;
  const integrators::Rk4Steps h = h_;
  const int regime_row = regime_row_, histogram_row = histogram_row_;
  double* const values = values_;
  const long w = width_;
  const stats::TimeMoments::Rows m = acc_.moments->rows();
  stats::RegimeCounter::Rows r{};
  if (acc_.regimes) r = acc_.regimes->rows();
  Lanes* const samples = samples_;
  Lanes s[G][D], shift[G][D], s1[G][D], s2[G][D];
  RegimeLanes regime[G] = {};
  load_state(x, lane, s);
  for (int g = 0; g < G; ++g) {
    for (int i = 0; i < D; ++i) {
      const long at = i * w + lane + g * L;
      shift[g][i] = load_lanes(m.shift + at);
      s1[g][i] = load_lanes(m.s1 + at);
      s2[g][i] = load_lanes(m.s2 + at);
    }
    if (regime_row >= 0) regime[g].begin(r, lane + g * L);
  }
  for (int t = 0; t < steps; ++t) {
    step_group<G, Scheduled>(eq, h, t, s);
    if (t == 0 && opens_block) {
      for (int g = 0; g < G; ++g) {
        for (int i = 0; i < D; ++i) {
          shift[g][i] = s[g][i];
          if (first) store_lanes(m.origin + i * w + lane + g * L, s[g][i]);
        }
      }
    }
    for (int g = 0; g < G; ++g) {
      for (int i = 0; i < D; ++i) {
        stats::TimeMoments::add_sample(s[g][i], shift[g][i], s1[g][i], s2[g][i]);
        samples[(t * G + g) * D + i] = s[g][i];
      }
      if (regime_row >= 0) regime[g].add(pick(s[g], regime_row));
      if (histogram_row >= 0) store_lanes(values + t * w + lane + g * L, pick(s[g], histogram_row));
    }
  }
  store_state(x, lane, s);
  for (int g = 0; g < G; ++g) {
    for (int i = 0; i < D; ++i) {
      const long at = i * w + lane + g * L;
      store_lanes(m.shift + at, shift[g][i]);
      store_lanes(m.s1 + at, s1[g][i]);
      store_lanes(m.s2 + at, s2[g][i]);
    }
    if (regime_row >= 0) regime[g].end(r, w, lane + g * L, steps);
  }
  fold_extremes<G>(lane, steps);
}

// The segment's samples (samples_, [steps][G][D]) into the running extremes of the group:
// the runs' extremes of every series side by side (independent chains), then merged.
template <typename Equations>
template <int G>
void FusedKernel<Equations>::fold_extremes(int lane, int steps) const {
  const stats::Extremes::Rows e = acc_.extremes->rows();
  const std::int64_t first = acc_.extremes->count();
  const Lanes* const samples = samples_;
  const long w = width_;
  Lanes run_lo[G][D], run_hi[G][D];
  for (int g = 0; g < G; ++g) {
    for (int i = 0; i < D; ++i) {
      run_lo[g][i] = Lanes{} + stats::Extremes::kInfinity;
      run_hi[g][i] = Lanes{} - stats::Extremes::kInfinity;
    }
  }
  for (int t = 0; t < steps; ++t) {
    for (int g = 0; g < G; ++g) {
      for (int i = 0; i < D; ++i) {
        stats::Extremes::fold(samples[(t * G + g) * D + i], run_lo[g][i], run_hi[g][i]);
      }
    }
  }
  for (int g = 0; g < G; ++g) {
    for (int i = 0; i < D; ++i) {
      const long at = i * w + lane + g * L;
      Lanes lo = load_lanes(e.min + at), hi = load_lanes(e.max + at);
      LaneInts lo_at = load_lanes(e.min_at + at), hi_at = load_lanes(e.max_at + at);
      stats::Extremes::merge_run([&](int t) { return samples[(t * G + g) * D + i]; }, steps,
                                 first, run_lo[g][i], run_hi[g][i], lo, lo_at, hi, hi_at);
      store_lanes(e.min + at, lo);
      store_lanes(e.max + at, hi);
      store_lanes(e.min_at + at, lo_at);
      store_lanes(e.max_at + at, hi_at);
    }
  }
}

}  // namespace

std::unique_ptr<Kernel> make_fused_kernel(const Setup& setup, const Accumulators& acc) {
  if (setup.model_info && setup.model_info->fast_kernel == models::FastKernel::circulation) {
    return std::make_unique<FusedKernel<models::Lorenz84Equations>>(
        models::Lorenz84Equations::from(setup.parameters), setup, acc);
  }
  return std::make_unique<FusedKernel<models::Lorenz63Equations>>(
      models::Lorenz63Equations::from(setup.parameters), setup, acc);
}

}  // namespace chaosweep::run
