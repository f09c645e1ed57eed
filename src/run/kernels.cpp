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
#include "run/forcing_noise.hpp"
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

/// Euler-Maruyama or Heun (integrators/sde.hpp), with or without noise, driven by the batch's
/// ForcingNoise (run/forcing_noise.hpp: keyed draws, red noise, a scheduled amplitude). A twin
/// kernel is given its members' numbers, so each twin draws its member's noise. The step
/// index comes from set_step, so chunks and resumes draw the same increments. A scheduled
/// model parameter is set on the stepper's own model copy at t0 before f(x) and at t1 before
/// Heun's f(p), as for RK4.
class StochasticStepper final : public Stepper {
 public:
  StochasticStepper(const models::Model& model, const Setup& s, KernelMembers members)
      : own_model_(schedules_model(s) ? s.model_info->make(s.parameters) : nullptr),
        noise_(s, s.width, members),
        sde_(own_model_ ? *own_model_ : model, s.width, sde_method(s), sde_noise_form(s),
             noise_.variables()),
        dt_(s.dt) {
    if (own_model_) clock_.emplace(*own_model_, *s.schedule, s.schedule_offset);
  }
  void set_step(std::int64_t step) override { step_ = step; }
  void step(double* x) override {
    const integrators::StepNoise noise = noise_.at(step_);
    if (clock_) {
      const StepTimes t = step_times(step_, dt_);
      sde_.step_at(x, dt_, noise, t.t0, t.t1, *clock_);
    } else {
      sde_.step(x, dt_, noise);
    }
    ++step_;
  }
  /// The model as of the last stage (for derived observables after a step).
  const models::Model* scheduled_model() const { return own_model_.get(); }

 private:
  std::unique_ptr<models::Model> own_model_;  // a scheduled model parameter: the stepper's copy
  ForcingNoise noise_;
  integrators::SdeBatch sde_;
  std::optional<ScheduledParameter> clock_;  // a scheduled model parameter
  double dt_;
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
  if (s.width % integrators::kLanes != 0) return KernelKind::generic;
  const bool sign_or_none = s.regime_kind == spec::RegimeKind::none ||
                            (s.regime_kind == spec::RegimeKind::sign && s.n_regimes == 2);
  const models::FastKernel fast = s.model_info ? s.model_info->fast_kernel : models::FastKernel::none;
  if (fast == models::FastKernel::ring) {
    // RK4: the ring kernel evaluates a scheduled F per stage. The stochastic steps take a
    // scheduled noise amplitude (ForcingNoise) but no schedule of F (generic path).
    const bool scheduled_ok = s.method == "rk4" ? !s.schedule || s.schedule->parameter == "F"
                                                : !schedules_model(s);
    return sign_or_none && scheduled_ok ? KernelKind::ring : KernelKind::generic;
  }
  if (fast != models::FastKernel::convection_loop && fast != models::FastKernel::circulation) {
    return KernelKind::generic;
  }
  // The fused kernel evaluates a scheduled model parameter at the RK4 stage times; under the
  // stochastic schemes (the convection loop only) it takes a scheduled noise amplitude
  // (ForcingNoise gives each step's amplitudes) but no schedule of a model parameter, which
  // stays on the generic path (StochasticStepper: the parameter set at the scheme's times).
  if (s.method != "rk4" &&
      (schedules_model(s) || fast != models::FastKernel::convection_loop)) {
    return KernelKind::generic;
  }
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
  std::uint8_t* __restrict flag = flags.data();  // bytes that never alias the state (vectorised)
  for (int i = 0; i < dim; ++i) {
    const double* __restrict row = x + static_cast<long>(i) * width;
    for (int m = 0; m < width; ++m) flag[m] |= !std::isfinite(row[m]);
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
      return make_fused_kernel(s, acc, members);
    case KernelKind::ring:
      return make_ring_kernel(s, acc, members);
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
