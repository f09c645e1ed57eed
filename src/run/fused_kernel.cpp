// The fused kernel: the step (RK4, or Euler-Maruyama or Heun under stochastic forcing) and
// every per-step accumulator update on Lanes (kLanes members, one SIMD register:
// integrators/lanes.hpp), with G Lanes interleaved so that independent dependency chains keep
// the FMA pipelines busy, and the state and running sums held in local variables (registers)
// for a whole segment of steps.
//
// The step: RK4 (integrators/rk4_step.hpp, the model's equations), or SdeStep below, which
// performs integrators::SdeBatch::step's operations per member on the increments and
// amplitudes of the batch's ForcingNoise (run/forcing_noise.hpp, the one source of the forcing,
// keyed draws and red noise's Ornstein-Uhlenbeck state included), taken for the whole segment
// before its steps.
//
// Per step and Lane, after the step:
//   moments, every state variable i:  TimeMoments::add_sample(x_i, shift_i, s1_i, s2_i)
//     (at the first sample of a block shift_i = x_i, at the very first also origin_i = x_i)
//   sign regimes of state variable r:  regime = 0 if x_r >= 0 else 1 (NaN -> 1), then the
//     RegimeCounter update (regimes.hpp) in 64-bit integer Lanes
//   histogram of state variable h:     with AVX-512 x_h binned as the kernel steps
//     (stats/histogram_lanes.hpp, the histogram's own rule) into a [steps][width] buffer of
//     slots, counted after the segment by MemberHistogram::add_slots; otherwise x_h stored to
//     a [steps][width] buffer, binned and counted after the segment by add_steps
//   extremes, every state variable i:  x_i stored to the group's [steps][G][D] buffer of
//     Lanes; after the segment Extremes::fold (a min and a max per sample, every series side
//     by side) and merge_run (the sample index searched only where a running extreme is
//     beaten), which together are Extremes::add_sample on each sample in order
// exactly the operations of the generic path, so both give the same bits.
#include "run/fused_kernel.hpp"

#include <algorithm>
#include <cstdint>
#include <optional>
#include <vector>

#include "core/error.hpp"
#include "integrators/lanes.hpp"
#include "integrators/rk4_step.hpp"
#include "integrators/sde.hpp"
#include "models/lorenz63_equations.hpp"
#include "models/lorenz84_equations.hpp"
#include "run/batch_work.hpp"
#include "run/forcing_noise.hpp"
#include "run/lane_regimes.hpp"
#include "run/schedule.hpp"
#include "run/segment_noise.hpp"
#include "stats/histogram.hpp"

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

#if defined(__AVX512F__)
std::int32_t* slot_scratch(std::size_t n) {
  static thread_local std::vector<std::int32_t> rows;
  if (rows.size() < n) rows.resize(n);
  return rows.data();
}
#else
double* value_scratch(std::size_t n) {
  static thread_local std::vector<double> rows;
  if (rows.size() < n) rows.resize(n);
  return rows.data();
}
#endif

/// One RK4 step of one Lanes (the segment's step t and the column are not needed). The steps
/// are inlined into the group loops (left to the compiler, RK4 ran at 0.75 of its rate).
template <typename Equations>
struct Rk4Step {
  static constexpr bool kNoisy = false, kScheduled = false;
  static constexpr int kGroup = kAccumulateGroup;  // Lanes interleaved while accumulating
  Equations eq;
  integrators::Rk4Steps h;
  [[gnu::always_inline]] void operator()(int, long, Lanes (&x)[Equations::kDim]) const {
    integrators::rk4_step<Equations::kDim>(eq, h, x);
  }
};

/// The equations of the RK4 stages of one step under a scheduled parameter: at the step's
/// start (stage 1), middle (stages 2 and 3) and end (stage 4).
template <typename Equations>
struct StageEquations {
  Equations start, middle, end;
};

/// One RK4 step of one Lanes with a scheduled parameter: the segment's step t takes the stage
/// equations the kernel computed for it (stages[t], ScheduledStages).
template <typename Equations>
struct ScheduledRk4Step {
  static constexpr bool kNoisy = false, kScheduled = true;
  // Lanes interleaved while accumulating: 2 (with 3, as for RK4, the stage equations' values,
  // read from memory for every Lanes, ran Lorenz-63 at 0.82-0.83 of its unscheduled rate;
  // 2 gave 0.86)
  static constexpr int kGroup = 2;
  integrators::Rk4Steps h;
  const StageEquations<Equations>* stages;
  [[gnu::always_inline]] void operator()(int t, long, Lanes (&x)[Equations::kDim]) const {
    const StageEquations<Equations>& e = stages[t];
    integrators::rk4_step<Equations::kDim>(e.start, e.middle, e.end, h, x);
  }
};

/// A scheduled parameter's stage equations for the segment's steps: the parameter at t0,
/// t0 + dt/2 and t1 of each step (step_times, Rk4Batch::stage_time), set by Equations::set as
/// the generic path's ScheduledParameter sets it in the model.
template <typename Equations>
class ScheduledStages {
 public:
  ScheduledStages(const Setup& s, const Equations& eq)
      : eq_(eq), schedule_(*s.schedule, s.schedule_offset), slot_(Equations::slot(s.schedule->parameter)),
        dt_(s.dt), stages_(kMaxSegment) {
    if (slot_ < 0) throw Error("the fused kernel cannot schedule " + s.schedule->parameter);
  }
  /// The stage equations of steps first .. first + steps - 1 (steps <= kMaxSegment).
  void take(std::int64_t first, int steps) {
    for (int t = 0; t < steps; ++t) {
      const StepTimes times = step_times(first + t, dt_);
      StageEquations<Equations>& e = stages_[static_cast<std::size_t>(t)];
      e = {eq_, eq_, eq_};
      e.start.set(slot_, schedule_.at(integrators::Rk4Batch::stage_time(1, times.t0, times.t1, dt_)));
      e.middle.set(slot_, schedule_.at(integrators::Rk4Batch::stage_time(2, times.t0, times.t1, dt_)));
      e.end.set(slot_, schedule_.at(integrators::Rk4Batch::stage_time(4, times.t0, times.t1, dt_)));
    }
  }
  const StageEquations<Equations>* data() const { return stages_.data(); }

 private:
  Equations eq_;
  ParameterSchedule schedule_;
  int slot_;
  double dt_;
  std::vector<StageEquations<Equations>> stages_;  // [kMaxSegment]
};

/// One Euler-Maruyama (Heun false) or Heun step of one Lanes with additive or multiplicative
/// (Multiplicative) noise, SdeBatch::advance's operations per member (integrators/sde.cpp):
///   p = x + dt f(x);  p_i += a0 dw0_i   (multiplicative: a0 x_i dw0_i)  [Euler-Maruyama: x = p]
///   g = (dt/2) (f(x) + f(p));  g_i += (a0/2) dw0_i, then g_i += (a1/2) dw1_i
///     (multiplicative: (a0/2) x_i dw0_i, (a1/2) p_i dw1_i);  x += g
/// with the noise of the segment's step t: dw0/dw1 [steps][rows][width], a0/a1 [steps], and
/// noisy state variable i on row row_of[i] (-1: none).
template <typename Equations, bool Heun, bool Multiplicative>
struct SdeStep {
  static constexpr bool kNoisy = true, kScheduled = false;
  // Lanes interleaved while accumulating: 2 (3, as for RK4, spills the predictor and the
  // second right-hand side: Heun without noise ran at 0.7 of the rate with 2)
  static constexpr int kGroup = 2;
  static constexpr int D = Equations::kDim;
  Equations eq;
  double dt, half;
  long width;
  int rows;
  int row_of[D];
  const double* dw0;
  const double* dw1;
  const double* a0;
  const double* a1;

  static Lanes term(double a, Lanes x, Lanes d) {
    if constexpr (Multiplicative) {
      return a * x * d;
    } else {
      (void)x;
      return a * d;
    }
  }

  [[gnu::always_inline]] void operator()(int t, long column, Lanes (&x)[D]) const {
    const long at = static_cast<long>(t) * rows * width + column;
    Lanes f0[D], p[D];
    eq.rhs(x, f0);
    for (int i = 0; i < D; ++i) p[i] = x[i] + dt * f0[i];
    const double amp0 = 1.0 * a0[t];
    for (int i = 0; i < D; ++i) {
      if (row_of[i] >= 0) p[i] += term(amp0, x[i], load_lanes(dw0 + at + row_of[i] * width));
    }
    if constexpr (!Heun) {
      for (int i = 0; i < D; ++i) x[i] = p[i];
    } else {
      Lanes f1[D];
      eq.rhs(p, f1);
      for (int i = 0; i < D; ++i) f1[i] = half * (f0[i] + f1[i]);
      const double h0 = 0.5 * a0[t], h1 = 0.5 * a1[t];
      for (int i = 0; i < D; ++i) {
        if (row_of[i] < 0) continue;
        const long r = at + row_of[i] * width;
        f1[i] += term(h0, x[i], load_lanes(dw0 + r));
        f1[i] += term(h1, p[i], load_lanes(dw1 + r));
      }
      for (int i = 0; i < D; ++i) x[i] += f1[i];
    }
  }
};

template <typename Equations, typename Step>
class FusedKernel final : public Kernel {
  static constexpr int D = Equations::kDim;

 public:
  /// With noise (Step::kNoisy) the kernel draws the noise of `members` (KernelMembers).
  /// With a schedule (Step::kScheduled) it evaluates the parameter from `eq` at every stage.
  FusedKernel(const Step& step, const Setup& s, const Accumulators& acc, KernelMembers members,
              const Equations& eq)
      : step_(step), width_(s.width), acc_(acc),
        regime_row_(acc.regimes ? s.regime_coordinates[0] : -1),
        histogram_row_(acc.histogram ? s.histogram_observable : -1) {
#if defined(__AVX512F__)
    if (acc.histogram) {
      slots_ = slot_scratch(static_cast<std::size_t>(kMaxSegment) * s.width);
      bins_.emplace(acc.histogram->lanes());
    }
#else
    if (acc.histogram) values_ = value_scratch(static_cast<std::size_t>(kMaxSegment) * s.width);
#endif
    samples_ = sample_scratch(static_cast<std::size_t>(kMaxSegment) * kAccumulateGroup * D);
    if constexpr (Step::kNoisy) {
      const SegmentNoise& noise = noise_.emplace(s, members);
      step_.width = s.width;
      step_.rows = noise.rows();
      std::fill(std::begin(step_.row_of), std::end(step_.row_of), -1);
      for (int r = 0; r < noise.rows(); ++r) step_.row_of[noise.variables()[r]] = r;
      step_.dw0 = noise.dw0();
      step_.dw1 = noise.dw1();
      step_.a0 = noise.a0();
      step_.a1 = noise.a1();
    } else {
      (void)members;
    }
    if constexpr (Step::kScheduled) {
      stages_.emplace(s, eq);
      step_.stages = stages_->data();
    }
  }

  void set_step(std::int64_t step) override { step_index_ = step; }

  void spin(double* x, int steps) override {
    for (int done = 0; done < steps;) {  // with noise: runs of at most kMaxSegment steps
      const bool chunks = Step::kNoisy || Step::kScheduled;  // buffers of kMaxSegment steps
      const int run = chunks ? std::min(kMaxSegment, steps - done) : steps;
      take_noise(run);
      int lane = 0;
      for (; lane + kSpinGroup * L <= width_; lane += kSpinGroup * L) {
        spin_group<kSpinGroup>(x, lane, run);
      }
      for (; lane + 2 * L <= width_; lane += 2 * L) spin_group<2>(x, lane, run);
      for (; lane < width_; lane += L) spin_group<1>(x, lane, run);
      done += run;
    }
  }

  void accumulate(double* x, int steps) override {
    take_noise(steps);
    stats::TimeMoments& moments = *acc_.moments;
    const bool opens_block = moments.block_starts();
    const bool first = moments.count() == 0;
    if (acc_.histogram) {
      accumulate_groups<true>(x, steps, opens_block, first);
    } else {
      accumulate_groups<false>(x, steps, opens_block, first);
    }
    moments.added(steps);
    acc_.extremes->added(steps);
    if (acc_.regimes) acc_.regimes->added(steps);
#if defined(__AVX512F__)
    if (acc_.histogram) acc_.histogram->add_slots(slots_, steps);
#else
    if (acc_.histogram) acc_.histogram->add_steps(values_, steps);
#endif
  }

 private:
  long row(int i) const { return static_cast<long>(i) * width_; }  // offset of state row i

  /// With noise or a schedule: the noise or the stage equations of the next `steps` steps
  /// into the step's buffers.
  void take_noise(int steps) {
    if constexpr (Step::kNoisy) noise_->take(step_index_, steps);
    if constexpr (Step::kScheduled) stages_->take(step_index_, steps);
    step_index_ += steps;
  }
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

  template <int G>
  void spin_group(double* x, int lane, int steps) const {
    const Step step = step_;
    Lanes s[G][D];
    load_state(x, lane, s);
    for (int t = 0; t < steps; ++t) {
      for (int g = 0; g < G; ++g) step(t, lane + g * L, s[g]);
    }
    store_state(x, lane, s);
  }

  /// Every group of the batch; Histogram: whether the histogram is fed (its own instances,
  /// so that a run without one has none of its code in the loop).
  template <bool Histogram>
  void accumulate_groups(double* x, int steps, bool opens_block, bool first) {
    int lane = 0;
    for (; lane + Step::kGroup * L <= width_; lane += Step::kGroup * L) {
      accumulate_group<Step::kGroup, Histogram>(x, lane, steps, opens_block, first);
    }
    for (; lane + 2 * L <= width_; lane += 2 * L) {
      accumulate_group<2, Histogram>(x, lane, steps, opens_block, first);
    }
    for (; lane < width_; lane += L) {
      accumulate_group<1, Histogram>(x, lane, steps, opens_block, first);
    }
  }
  template <int G, bool Histogram>
  void accumulate_group(double* x, int lane, int steps, bool opens_block, bool first);
  template <int G>
  void fold_extremes(int lane, int steps) const;

  Step step_;
  std::optional<SegmentNoise> noise_;  // with noise: the step's increments (bound to step_)
  std::optional<ScheduledStages<Equations>> stages_;  // with a schedule (bound to step_)
  std::int64_t step_index_ = 0;        // the next step's index
  int width_;
  Accumulators acc_;
  int regime_row_, histogram_row_;  // state rows, -1 when not used
#if defined(__AVX512F__)
  std::int32_t* slots_ = nullptr;  // [kMaxSegment][width]: the histogram slot per step
  std::optional<stats::HistogramLanes> bins_;  // the histogram's bin rule
#else
  double* values_ = nullptr;  // [kMaxSegment][width]: the histogram observable per step
#endif
  Lanes* samples_ = nullptr;  // [kMaxSegment][G][D]: the group's state per step (scratch rows)
};

template <typename Equations, typename Step>
template <int G, bool Histogram>
void FusedKernel<Equations, Step>::accumulate_group(double* x, int lane, int steps,
                                                    bool opens_block, bool first) {
  // locals, so that stores through the row pointers cannot be taken to change them
  const Step step = step_;
  const int regime_row = regime_row_, histogram_row = histogram_row_;
#if defined(__AVX512F__)
  std::int32_t* const slots = slots_;
  __m512i slot_rows[G];  // (bins + 1) m for each register's members m
  if constexpr (Histogram) {
    const std::int64_t row = acc_.histogram->bins() + 1;
    for (int g = 0; g < G; ++g) {
      slot_rows[g] = _mm512_mullo_epi64(
          _mm512_add_epi64(_mm512_set_epi64(7, 6, 5, 4, 3, 2, 1, 0),
                           _mm512_set1_epi64(lane + g * L)),
          _mm512_set1_epi64(row));
    }
  }
#else
  double* const values = values_;
#endif
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
    for (int g = 0; g < G; ++g) step(t, lane + g * L, s[g]);
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
#if defined(__AVX512F__)
      if constexpr (Histogram) {
        const __m512i bin = bins_->bins(reinterpret_cast<__m512d>(pick(s[g], histogram_row)));
        _mm256_storeu_si256(reinterpret_cast<__m256i*>(slots + t * w + lane + g * L),
                            _mm512_cvtepi64_epi32(_mm512_add_epi64(slot_rows[g], bin)));
      }
#else
      if constexpr (Histogram) store_lanes(values + t * w + lane + g * L, pick(s[g], histogram_row));
#endif
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
template <typename Equations, typename Step>
template <int G>
void FusedKernel<Equations, Step>::fold_extremes(int lane, int steps) const {
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

namespace {

template <bool Heun, bool Multiplicative>
std::unique_ptr<Kernel> make_sde(const models::Lorenz63Equations& eq, const Setup& s,
                                 const Accumulators& acc, KernelMembers members) {
  using Step = SdeStep<models::Lorenz63Equations, Heun, Multiplicative>;
  Step step{};
  step.eq = eq;
  step.dt = s.dt;
  step.half = 0.5 * s.dt;
  return std::make_unique<FusedKernel<models::Lorenz63Equations, Step>>(step, s, acc, members,
                                                                          eq);
}

/// RK4 for the model's equations, with a scheduled parameter or without.
template <typename Eq>
std::unique_ptr<Kernel> make_rk4(const Setup& setup, const Accumulators& acc,
                                 KernelMembers members) {
  const Eq eq = Eq::from(setup.parameters);
  const integrators::Rk4Steps h(setup.dt);
  if (setup.schedule) {
    return std::make_unique<FusedKernel<Eq, ScheduledRk4Step<Eq>>>(
        ScheduledRk4Step<Eq>{h, nullptr}, setup, acc, members, eq);
  }
  return std::make_unique<FusedKernel<Eq, Rk4Step<Eq>>>(Rk4Step<Eq>{eq, h}, setup, acc, members,
                                                        eq);
}

}  // namespace

std::unique_ptr<Kernel> make_fused_kernel(const Setup& setup, const Accumulators& acc,
                                          KernelMembers members) {
  if (setup.model_info && setup.model_info->fast_kernel == models::FastKernel::circulation) {
    return make_rk4<models::Lorenz84Equations>(setup, acc, members);  // RK4 only (choose_kernel)
  }
  using Eq = models::Lorenz63Equations;
  const Eq eq = Eq::from(setup.parameters);
  if (setup.method == "rk4") return make_rk4<Eq>(setup, acc, members);
  const bool heun = sde_method(setup) == integrators::SdeMethod::heun;
  const bool multiplicative = sde_noise_form(setup) == integrators::NoiseForm::multiplicative;
  if (heun) {
    return multiplicative ? make_sde<true, true>(eq, setup, acc, members)
                          : make_sde<true, false>(eq, setup, acc, members);
  }
  return multiplicative ? make_sde<false, true>(eq, setup, acc, members)
                        : make_sde<false, false>(eq, setup, acc, members);
}

}  // namespace chaosweep::run
