// Lyapunov exponents by the QR method over padded member batches (see lyapunov.hpp).
#include "run/lyapunov.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <memory>
#include <optional>
#include <stdexcept>

#include "integrators/sde.hpp"
#include "integrators/tangent_rk4.hpp"
#include "run/batch_work.hpp"
#include "run/forcing_noise.hpp"
#include "run/schedule.hpp"
#include "stats/lyapunov.hpp"

namespace chaosweep::run {
namespace {

/// Members per batch: the members to integrate rounded up to a multiple of 8, at most 64
/// (the last batch padded with copies of a real member). A member's operations do not depend
/// on its column or the batch width (as for Rk4Batch), so its exponents are the same bits at
/// any width; wider batches spread the loops' overhead (Lorenz-63 with one exponent ran at 0.63
/// of its present rate in batches of 8).
int batch_width(int count) {
  constexpr int kMost = 64, kStep = 8;
  return std::max(kStep, std::min(kMost, (count + kStep - 1) / kStep * kStep));
}

/// One batch of `width` members: state and k tangent vectors, SoA [state_dim][width]; tangent
/// vector j of the batch at tangents[j * n * width]. The tangent RK4 stepper
/// (integrators/tangent_rk4.hpp) advances both.
class Batch {
 public:
  /// RK4, or with `stochastic` (a case's Setup with a stochastic method) its scheme, whose
  /// forcing begin() keys by the batch's members.
  Batch(const models::Model& model, int width, int k, double dt, const Setup* stochastic)
      : n_(model.state_dim()), k_(k), width_(width), size_(static_cast<long>(n_) * width), dt_(dt),
        x_(size_), tangents_(static_cast<long>(k) * size_), logs_(static_cast<long>(k) * width),
        scratch_(2 * static_cast<long>(width)), dead_(static_cast<std::size_t>(width), false),
        stochastic_(stochastic) {
    if (stochastic) {
      sde_.emplace(model, width, sde_method(*stochastic), sde_noise_form(*stochastic),
                   ForcingNoise(*stochastic, width, {}).variables());
    } else {
      rk4_.emplace(model, width, k);
    }
  }

  /// A new batch of members (first .. first + count - 1; the padding columns draw the first
  /// member's forcing).
  void begin(std::int64_t first, int count) {
    if (stochastic_) noise_.emplace(*stochastic_, width_, KernelMembers{first, count});
  }

  /// Member m's start state; the tangent vectors become the first k unit vectors.
  void load(int m, const double* state) {
    for (int i = 0; i < n_; ++i) x_[static_cast<long>(i) * width_ + m] = state[i];
    for (int j = 0; j < k_; ++j) {
      double* v = tangents_.data() + j * size_;
      for (int i = 0; i < n_; ++i) v[static_cast<long>(i) * width_ + m] = i == j ? 1.0 : 0.0;
    }
    dead_[m] = false;
  }

  /// One RK4 step of the state and the tangent step of every tangent vector. With a clock,
  /// this is step n of the run (from n dt to (n + 1) dt, run/schedule.hpp step_times): the
  /// clock is set to each stage's time before that stage's rhs and tangent products, the times
  /// Rk4Batch::step_at gives, so the state follows the members' own scheduled integration.
  /// Under stochastic forcing, the member's own forcing of step n (run/forcing_noise.hpp) and
  /// the scheme's step with its tangent (integrators::SdeBatch::step_tangent), so the state
  /// follows the member's own noisy trajectory bitwise and the exponents are those of the
  /// random dynamical system along that realisation.
  void step(std::int64_t n, integrators::Rk4Batch::StageClock* clock) {
    const StepTimes t = step_times(n, dt_);
    if (sde_) {
      sde_->step_tangent(x_.data(), tangents_.data(), k_, dt_, noise_->at(n), t.t0, t.t1, clock);
      return;
    }
    if (clock == nullptr) {
      rk4_->step(x_.data(), tangents_.data(), dt_);
      return;
    }
    rk4_->step_at(x_.data(), tangents_.data(), dt_, t.t0, t.t1, *clock);
  }

  /// QR re-orthonormalisation of every member's tangent vectors at once
  /// (stats::gram_schmidt_batch); adds log R_ii to sums[m * k + i] for the live members when
  /// sums is not null. A member whose state or vectors are non-finite is marked dead; its
  /// vectors are still carried along with the batch, but nothing of it is used from then on.
  void renormalise(double* sums) {
    for (int m = 0; m < width_; ++m) {
      if (dead_[m]) continue;
      bool finite = true;
      for (int i = 0; i < n_; ++i) {
        finite = finite && std::isfinite(x_[static_cast<long>(i) * width_ + m]);
      }
      for (int j = 0; j < k_ && finite; ++j) {
        const double* v = tangents_.data() + j * size_;
        for (int i = 0; i < n_; ++i) {
          finite = finite && std::isfinite(v[static_cast<long>(i) * width_ + m]);
        }
      }
      if (!finite) dead_[m] = true;
    }
    stats::gram_schmidt_batch(tangents_.data(), n_, k_, width_, logs_.data(), scratch_.data());
    if (sums == nullptr) return;
    for (int m = 0; m < width_; ++m) {
      if (dead_[m]) continue;
      for (int j = 0; j < k_; ++j) sums[m * k_ + j] += logs_[static_cast<long>(j) * width_ + m];
    }
  }

  bool dead(int m) const { return dead_[m]; }

 private:
  int n_, k_, width_;
  long size_;
  double dt_;
  std::vector<double> x_, tangents_, logs_, scratch_;  // logs_: [k][width]
  std::vector<bool> dead_;
  const Setup* stochastic_;
  std::optional<integrators::TangentRk4Batch> rk4_;
  std::optional<integrators::SdeBatch> sde_;
  std::optional<ForcingNoise> noise_;  // stochastic: the current batch's forcing
};

}  // namespace

std::vector<double> lyapunov_exponents(const models::Model& model,
                                       const std::vector<double>& initial, int count, double dt,
                                       std::int64_t spinup_steps, std::int64_t steps,
                                       int exponents, std::int64_t renormalise_every_steps,
                                       integrators::Rk4Batch::StageClock* clock,
                                       const Setup* stochastic, std::int64_t first_member) {
  const int n = model.state_dim();
  if (!model.has_tangent()) {
    throw std::invalid_argument("lyapunov_exponents: the model has no tangent-linear product");
  }
  if (count < 0) throw std::invalid_argument("lyapunov_exponents: count must be >= 0");
  if (initial.size() != static_cast<std::size_t>(count) * static_cast<std::size_t>(n)) {
    throw std::invalid_argument("lyapunov_exponents: initial must hold count * state_dim values");
  }
  if (!(dt > 0.0) || !std::isfinite(dt)) {
    throw std::invalid_argument("lyapunov_exponents: dt must be positive and finite");
  }
  if (spinup_steps < 0 || steps < 1 || renormalise_every_steps < 1) {
    throw std::invalid_argument(
        "lyapunov_exponents: need spinup_steps >= 0, steps >= 1, renormalise_every_steps >= 1");
  }
  if (exponents < 1 || exponents > n) {
    throw std::invalid_argument("lyapunov_exponents: exponents must be in 1..state_dim");
  }
  const int k = exponents;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<double> result(static_cast<std::size_t>(count) * k, nan);
  const double time = static_cast<double>(steps) * dt;

  const int width = batch_width(count);
  Batch batch(model, width, k, dt, stochastic);
  std::vector<double> sums(static_cast<std::size_t>(width) * k);
  for (int first = 0; first < count; first += width) {
    const int live = std::min(width, count - first);
    batch.begin(first_member + first, live);
    for (int m = 0; m < width; ++m) {
      const int member = first + std::min(m, live - 1);  // padding: copies of the last member
      batch.load(m, initial.data() + static_cast<std::size_t>(member) * n);
    }
    for (std::int64_t s = 1; s <= spinup_steps; ++s) {
      batch.step(s - 1, clock);
      if (s % renormalise_every_steps == 0 || s == spinup_steps) batch.renormalise(nullptr);
    }
    std::fill(sums.begin(), sums.end(), 0.0);
    for (std::int64_t s = 1; s <= steps; ++s) {
      batch.step(spinup_steps + s - 1, clock);
      if (s % renormalise_every_steps == 0 || s == steps) batch.renormalise(sums.data());
    }
    for (int m = 0; m < live; ++m) {
      if (batch.dead(m)) continue;
      double* out = result.data() + static_cast<std::size_t>(first + m) * k;
      bool finite = true;
      for (int j = 0; j < k; ++j) {
        out[j] = sums[static_cast<std::size_t>(m) * k + j] / time;
        finite = finite && !std::isnan(out[j]);
      }
      // The QR order is descending up to finite-time error between close exponents; sort so
      // the contract holds exactly (NaN-free lists only: NaN has no order).
      if (finite) std::sort(out, out + k, std::greater<double>());
    }
  }
  return result;
}

// With a schedule, the Lyapunov integration's own model copy starts at the t = 0 value and the
// scheduled parameter is set at every stage time by the same clock the members' kernel uses
// (run/schedule.hpp).
void add_lyapunov(const spec::Spec& spec, const plan::Plan& plan, BatchResult& r) {
  const spec::Lyapunov& l = spec.statistics.lyapunov;
  if (!l.enabled) return;
  const models::ModelInfo* info = plan.model;
  const plan::Case& c = plan.cases[static_cast<std::size_t>(r.case_index)];
  const std::unique_ptr<models::Model> model = info->make(parameters_at_start(spec, c));
  std::optional<ScheduledParameter> clock;
  if (spec.schedule.kind != spec::ScheduleKind::none &&
      spec.schedule.parameter != spec::kNoiseAmplitudeAxis) {  // the amplitude: ForcingNoise
    clock.emplace(*model, spec.schedule, schedule_offset(spec, c));
  }
  std::optional<Setup> stochastic;
  if (spec.integration.method != "rk4") stochastic.emplace(make_setup(spec, plan, c, *model));
  const double dt = spec.integration.dt;
  const std::int64_t every = plan.lyapunov_every_steps;
  r.lyapunov = lyapunov_exponents(*model, r.initial_state, r.count, dt, plan.spinup_steps,
                                   plan.accumulate_steps, l.exponents, every,
                                   clock ? &*clock : nullptr, stochastic ? &*stochastic : nullptr,
                                   r.first_member);
  for (int m = 0; m < r.count; ++m) {
    if (r.status[static_cast<std::size_t>(m)] == kValid) continue;
    for (int k = 0; k < l.exponents; ++k) {
      r.lyapunov[static_cast<std::size_t>(m) * l.exponents + k] = NAN;
    }
  }
}

}  // namespace chaosweep::run
