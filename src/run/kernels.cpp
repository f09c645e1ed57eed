// Kernel choice, the generic per-step feed of the accumulators, and the stepped kernels
// (generic RK4 and the fused ring RK4); the fused small-state kernel is in fused_kernel.cpp.
#include "run/kernels.hpp"

#include <algorithm>
#include <cmath>
#include <optional>
#include <vector>

#include "core/error.hpp"
#include "integrators/lanes.hpp"
#include "integrators/rk4.hpp"
#include "integrators/rk4_ring.hpp"
#include "integrators/sde.hpp"
#include "models/lorenz96_equations.hpp"
#include "run/batch_work.hpp"
#include "run/fused_kernel.hpp"
#include "run/member_noise.hpp"
#include "run/ring_kernel.hpp"
#include "run/schedule.hpp"

namespace chaosweep::run {
namespace {

/// Feeds the accumulators from the batch state after one step: derived observables (if any
/// is used), time moments and extremes of the selected observables, regimes, histogram.
class StepFeed {
 public:
  StepFeed(const Setup& s, const models::Model& model, const Accumulators& acc)
      : setup_(s),
        model_(model),
        acc_(acc),
        derived_(static_cast<std::size_t>(s.n_model_observables - s.state_dim) * s.width),
        regime_(static_cast<std::size_t>(s.width), 0) {}

  /// Row pointers into the batch state x ([state_dim][width]); x must not move afterwards.
  void bind(const double* x) {
    if (x == bound_) return;
    bound_ = x;
    const int w = setup_.width, d = setup_.state_dim;
    column_.clear();
    selected_.clear();
    regime_columns_.clear();
    for (int i = 0; i < setup_.n_model_observables; ++i) {  // state rows, then derived rows
      column_.push_back(i < d ? x + static_cast<long>(i) * w
                              : derived_.data() + static_cast<long>(i - d) * w);
    }
    for (int i : setup_.observables) selected_.push_back(column_[i]);
    for (int i : setup_.regime_coordinates) regime_columns_.push_back(column_[i]);
  }

  void feed(const double* x) {
    const int w = setup_.width;
    bind(x);
    if (setup_.needs_derived) model_.derived(x, derived_.data(), w);
    acc_.moments->add(selected_.data());
    acc_.extremes->add(selected_.data());
    if (acc_.regimes) {
      if (setup_.regime_kind == spec::RegimeKind::sign) {
        stats::classify_sign(regime_columns_[0], w, regime_.data());
      } else {
        stats::classify_nearest(regime_columns_, setup_.centroids, w, regime_.data());
      }
      acc_.regimes->add(regime_.data());
    }
    if (acc_.histogram) acc_.histogram->add(column_[setup_.histogram_observable]);
  }

 private:
  const Setup& setup_;
  const models::Model& model_;
  Accumulators acc_;
  std::vector<double> derived_;  // [derived observables][width]
  std::vector<int> regime_;      // [width], scratch
  const double* bound_ = nullptr;
  std::vector<const double*> column_, selected_, regime_columns_;
};

/// One RK4 step of a whole batch.
class Stepper {
 public:
  virtual ~Stepper() = default;
  virtual void step(double* x) = 0;
  /// The index of the next step (time-dependent steppers only).
  virtual void set_step(std::int64_t step) { (void)step; }
};

/// Rk4Batch over the model's batched rhs (any model, any width).
class GenericStepper final : public Stepper {
 public:
  GenericStepper(const models::Model& model, int width, double dt)
      : rk4_(model, width), dt_(dt) {}
  void step(double* x) override { rk4_.step(x, dt_); }

 private:
  integrators::Rk4Batch rk4_;
  double dt_;
};

/// Rk4Batch over the stepper's own copy of the model whose scheduled parameter is set at every
/// stage time: step n runs from t0 = n dt to t1 = (n + 1) dt (both from the step count), with
/// the value at t0 for k1, at t0 + dt/2 for k2 and k3, at t1 for k4. Each stepper owns its
/// model copy, so a batch's member and twin kernels never share a parameter that changes.
class ScheduledStepper final : public Stepper {
 public:
  explicit ScheduledStepper(const Setup& s)
      : model_(build(s)),
        clock_(*model_, *s.schedule, s.schedule_offset),
        rk4_(*model_, s.width),
        dt_(s.dt) {}
  void set_step(std::int64_t step) override { step_ = step; }
  void step(double* x) override {
    const StepTimes t = step_times(step_, dt_);
    rk4_.step_at(x, dt_, t.t0, t.t1, clock_);
    ++step_;
  }
  /// The model as of the last stage (for derived observables after a step).
  const models::Model& model() const { return *model_; }

 private:
  static std::unique_ptr<models::Model> build(const Setup& s) {
    if (!s.model_info) throw Error("the setup has no model");
    return s.model_info->make(s.parameters);
  }

  std::unique_ptr<models::Model> model_;
  ScheduledParameter clock_;
  integrators::Rk4Batch rk4_;
  double dt_;
  std::int64_t step_ = 0;
};

/// The fused ring RK4 (integrators/rk4_ring.hpp), one Lanes at a time; width % kLanes == 0.
class RingStepper final : public Stepper {
 public:
  RingStepper(const models::Lorenz96Equations& eq, int width, double dt)
      : eq_(eq), h_(dt), width_(width),
        scratch_(static_cast<std::size_t>(integrators::ring_scratch_lanes(eq.n))) {}
  void step(double* x) override {
    for (int lane = 0; lane < width_; lane += integrators::kLanes) {
      integrators::ring_rk4_step(eq_, h_, eq_.n, x + lane, width_, scratch_.data());
    }
  }

 private:
  models::Lorenz96Equations eq_;
  integrators::Rk4Steps h_;
  int width_;
  std::vector<integrators::Lanes> scratch_;
};

/// Euler-Maruyama or Heun (integrators/sde.hpp), with or without noise. The Gaussian draw
/// of noisy variable i at step n of member m is keyed by (seed, case, m, n, i)
/// (run/member_noise.hpp); with a shared realisation the member is left out (every member
/// draws member -1's stream). A twin kernel is given its members' numbers, so each twin draws
/// its member's noise. The step index comes from set_step, so chunks and resumes draw the
/// same increments, and step n runs from t0 = n dt to t1 = (n + 1) dt (run/schedule.hpp).
///
/// White noise (additive, multiplicative): draw n is the Wiener increment of step n.
/// Red noise: eta_i is the unit-variance Ornstein-Uhlenbeck process of correlation time T,
/// started from its stationary law and advanced by its exact update,
///   eta(0) = xi_0,  eta(n + 1) = a eta(n) + sqrt(1 - a^2) xi_(n+1),  a = exp(-dt / T),
/// with xi_n the unit Gaussian draw n. It is an ordinary forcing A eta, integrated over the
/// step by the method's own rule: A(t0) eta(n) dt (Euler-Maruyama; Heun's predictor), the
/// trapezoid (A(t0) eta(n) + A(t1) eta(n + 1)) dt / 2 (Heun). eta is a pure function of the
/// draws up to step n; a kernel asked for a step its eta is not at replays the draws from
/// step 0 (after a resume), so eta never needs to be checkpointed.
///
/// A schedule either varies a model parameter (the stepper's own model copy, set at t0
/// before f(x) and at t1 before Heun's f(p), as for RK4) or the noise amplitude (A(t0) and
/// A(t1) above; A(t0) alone for Euler-Maruyama's white noise).
class StochasticStepper final : public Stepper {
 public:
  StochasticStepper(const models::Model& model, const Setup& s, KernelMembers members)
      : own_model_(schedules_model(s) ? s.model_info->make(s.parameters) : nullptr),
        sde_(own_model_ ? *own_model_ : model, s.width,
             s.method == "heun" ? integrators::SdeMethod::heun
                                : integrators::SdeMethod::euler_maruyama,
             s.noise.kind == spec::NoiseKind::multiplicative ? integrators::NoiseForm::multiplicative
                                                             : integrators::NoiseForm::additive,
             noisy_variables(s)),
        variables_(noisy_variables(s)),
        state_dim_(s.state_dim),
        width_(s.width),
        dt_(s.dt),
        sqrt_dt_(std::sqrt(s.dt)),
        amplitude_(s.noise.amplitude),
        red_(s.noise.kind == spec::NoiseKind::red),
        decay_(red_ ? std::exp(-s.dt / s.noise.correlation_time) : 0.0),
        innovation_(std::sqrt(1.0 - decay_ * decay_)),
        columns_(s.noise.shared ? 1 : s.width),
        dw_(variables_.size() * static_cast<std::size_t>(s.width)) {
    for (int m = 0; m < columns_; ++m) {
      const std::int64_t member =
          s.noise.shared ? -1 : members.first + (m < members.count ? m : 0);
      streams_.emplace_back(s.seed, s.case_index, member, kForcingStream);
    }
    if (red_) {
      eta_.assign(dw_.size(), 0.0);
      draws_.assign(dw_.size(), 0.0);
      dw1_.assign(dw_.size(), 0.0);
    }
    if (own_model_) clock_.emplace(*own_model_, *s.schedule, s.schedule_offset);
    if (s.schedule && !own_model_) amplitude_schedule_.emplace(*s.schedule, s.schedule_offset);
  }
  void set_step(std::int64_t step) override { step_ = step; }
  void step(double* x) override {
    const StepTimes t = step_times(step_, dt_);
    integrators::StepNoise noise{amplitude_, amplitude_, dw_.data(), dw_.data()};
    if (amplitude_schedule_) {
      noise.a0 = amplitude_schedule_->at(t.t0);
      noise.a1 = amplitude_schedule_->at(t.t1);
    }
    if (red_) {
      red_increments();
      noise.dw1 = dw1_.data();
    } else {
      draw(step_, sqrt_dt_, dw_.data());
    }
    if (columns_ == 1) {  // a shared realisation: column 0's noise for every member
      broadcast(dw_);
      if (red_) broadcast(dw1_);
    }
    if (clock_) {
      sde_.step_at(x, dt_, noise, t.t0, t.t1, *clock_);
    } else {
      sde_.step(x, dt_, noise);
    }
    ++step_;
  }
  /// The model as of the last stage (for derived observables after a step).
  const models::Model* scheduled_model() const { return own_model_.get(); }

 private:
  static bool schedules_model(const Setup& s) {
    return s.schedule && s.schedule->parameter != spec::kNoiseAmplitudeAxis;
  }
  static std::vector<int> noisy_variables(const Setup& s) {
    return s.noise.kind == spec::NoiseKind::none ? std::vector<int>{} : s.noise.variables;
  }

  /// Draw `step` of every stream, times `scale`, into out ([variables][width], the first
  /// columns_ columns).
  void draw(std::int64_t step, double scale, double* out) const {
    const std::size_t stride = static_cast<std::size_t>(width_);
    for (int m = 0; m < columns_; ++m) {
      wiener_increments(streams_[m], step, state_dim_, variables_, scale, out + m, stride);
    }
  }

  /// Column 0 of every row copied to the others.
  void broadcast(std::vector<double>& rows) const {
    const std::size_t stride = static_cast<std::size_t>(width_);
    for (std::size_t r = 0; r < variables_.size(); ++r) {
      double* row = rows.data() + r * stride;
      std::fill(row + 1, row + width_, row[0]);
    }
  }

  /// eta <- a eta + sqrt(1 - a^2) xi_step, in place, on the first columns_ columns.
  void next_eta(std::int64_t step) {
    draw(step, 1.0, draws_.data());
    const std::size_t stride = static_cast<std::size_t>(width_);
    for (std::size_t r = 0; r < variables_.size(); ++r) {
      for (int m = 0; m < columns_; ++m) {
        const std::size_t i = r * stride + static_cast<std::size_t>(m);
        eta_[i] = decay_ * eta_[i] + innovation_ * draws_[i];
      }
    }
  }

  /// dw_ <- eta(step_) dt, dw1_ <- eta(step_ + 1) dt; eta_ left at step_ + 1. Replays the
  /// draws from step 0 when eta_ is not at step_ (a new kernel, or a resume).
  void red_increments() {
    if (eta_step_ < 0 || eta_step_ > step_) {
      draw(0, 1.0, eta_.data());
      eta_step_ = 0;
    }
    while (eta_step_ < step_) next_eta(++eta_step_);
    const std::size_t n = dw_.size();
    for (std::size_t i = 0; i < n; ++i) dw_[i] = eta_[i] * dt_;
    next_eta(++eta_step_);
    for (std::size_t i = 0; i < n; ++i) dw1_[i] = eta_[i] * dt_;
  }

  static constexpr std::uint64_t kForcingStream = 2;
  std::unique_ptr<models::Model> own_model_;  // a scheduled model parameter: the stepper's copy
  integrators::SdeBatch sde_;
  std::optional<ScheduledParameter> clock_;              // a scheduled model parameter
  std::optional<ParameterSchedule> amplitude_schedule_;  // a scheduled noise amplitude
  std::vector<int> variables_;
  int state_dim_, width_;
  double dt_, sqrt_dt_, amplitude_;
  bool red_;
  double decay_, innovation_;  // red: a = exp(-dt / T), sqrt(1 - a^2)
  int columns_;                // streams: 1 (shared realisation) or width
  std::vector<MemberNoise> streams_;
  std::vector<double> dw_;               // [variables][width]: the step's dw0
  std::vector<double> eta_, draws_, dw1_;  // red: [variables][width]
  std::int64_t eta_step_ = -1;           // red: the step eta_ holds; -1: none yet
  std::int64_t step_ = 0;
};

/// A stepper followed, in accumulate(), by the generic per-step feed.
class SteppedKernel final : public Kernel {
 public:
  SteppedKernel(std::unique_ptr<Stepper> stepper, const Setup& s, const models::Model& model,
                const Accumulators& acc)
      : stepper_(std::move(stepper)), feed_(s, model, acc) {}
  void set_step(std::int64_t step) override { stepper_->set_step(step); }
  void spin(double* x, int steps) override {
    for (int t = 0; t < steps; ++t) stepper_->step(x);
  }
  void accumulate(double* x, int steps) override {
    for (int t = 0; t < steps; ++t) {
      stepper_->step(x);
      feed_.feed(x);
    }
  }

 private:
  std::unique_ptr<Stepper> stepper_;
  StepFeed feed_;
};

bool is_state(const Setup& s, int observable) { return observable < s.state_dim; }

}  // namespace

KernelKind choose_kernel(const Setup& s) {
  if (s.schedule || s.method != "rk4") return KernelKind::generic;
  if (s.width % integrators::kLanes != 0) return KernelKind::generic;
  const bool sign_or_none = s.regime_kind == spec::RegimeKind::none ||
                            (s.regime_kind == spec::RegimeKind::sign && s.n_regimes == 2);
  const models::FastKernel fast = s.model_info ? s.model_info->fast_kernel : models::FastKernel::none;
  if (fast == models::FastKernel::ring) return sign_or_none ? KernelKind::ring : KernelKind::generic;
  if (fast != models::FastKernel::convection_loop) return KernelKind::generic;
  const bool observables = std::all_of(s.observables.begin(), s.observables.end(),
                                       [&](int i) { return is_state(s, i); });
  const bool regimes = s.regime_kind == spec::RegimeKind::none ||
                       (s.regime_kind == spec::RegimeKind::sign && s.n_regimes == 2 &&
                        is_state(s, s.regime_coordinates[0]));
  const bool histogram = !s.histogram || is_state(s, s.histogram_observable);
  return observables && regimes && histogram ? KernelKind::fused : KernelKind::generic;
}

void flag_non_finite_columns(double* x, int dim, int width, const std::vector<double>& base,
                             std::vector<std::uint8_t>& flags) {
  for (int i = 0; i < dim; ++i) {
    const double* row = x + static_cast<long>(i) * width;
    for (int m = 0; m < width; ++m) flags[m] |= !std::isfinite(row[m]);
  }
  for (int m = 0; m < width; ++m) {
    if (!flags[m]) continue;
    for (int i = 0; i < dim; ++i) x[static_cast<std::size_t>(i) * width + m] = base[i];
  }
}

std::unique_ptr<Kernel> make_kernel(const Setup& s, const models::Model& model,
                                    const Accumulators& acc, KernelMembers members) {
  switch (s.kernel) {
    case KernelKind::fused:
      return make_fused_lorenz63_kernel(s, acc);
    case KernelKind::ring:
      return make_ring_kernel(s, acc);
    case KernelKind::generic:
      break;
  }
  if (s.method != "rk4") {  // derived observables from a scheduled copy, as of the step's end
    auto stepper = std::make_unique<StochasticStepper>(model, s, members);
    const models::Model* scheduled = stepper->scheduled_model();
    return std::make_unique<SteppedKernel>(std::move(stepper), s, scheduled ? *scheduled : model,
                                           acc);
  }
  if (s.schedule) {  // derived observables from the scheduled copy, as of the step's end
    auto stepper = std::make_unique<ScheduledStepper>(s);
    const models::Model& scheduled = stepper->model();
    return std::make_unique<SteppedKernel>(std::move(stepper), s, scheduled, acc);
  }
  // the ring with nearest regimes: the ring RK4 with the generic per-step feed
  const bool ring = s.model_info && s.model_info->fast_kernel == models::FastKernel::ring;
  if (ring && s.width % integrators::kLanes == 0) {
    return std::make_unique<SteppedKernel>(
        std::make_unique<RingStepper>(models::Lorenz96Equations::from(s.parameters), s.width,
                                      s.dt),
        s, model, acc);
  }
  return std::make_unique<SteppedKernel>(std::make_unique<GenericStepper>(model, s.width, s.dt),
                                         s, model, acc);
}

}  // namespace chaosweep::run
