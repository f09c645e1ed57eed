// One batch of one case: initial states, RK4 spin-up and accumulation, per-member statistics.
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// Time line of a run (dt = spec.integration.dt, S = plan.spinup_steps, A = plan.accumulate_steps):
//   step 0            initial states (base + perturbation); trajectory sample 0
//   steps 1 .. S      spin-up: integrated, not accumulated
//   steps S+1 .. S+A  after each step the selected observables feed the accumulators (A samples)
//   every k steps     (k = plan.trajectory_every_steps) the stored members' states are sampled
//   with twins        from step S every member has a twin integrated beside it and their
//                     separation is sampled every statistics.twins.every (run/twins.hpp)
//   steps S + j e     (e = plan.snapshot_every_steps, j = 0 .. plan.snapshot_count - 1) the
//                     selected observables and regime of every member are recorded (snapshots)
// With a schedule, the scheduled parameter takes its value at each RK4 stage time (step n runs
// from n dt to (n + 1) dt); the base spin-up to the attractor uses its value at t = 0.
// Every 32 steps and at the end each member's state is checked for finiteness; a non-finite
// member is flagged, its column reset to the base state (so the batch arithmetic stays finite)
// and all its statistics reported as NaN (transition count 0, no histogram counts).
#include "run/batch_runner.hpp"

#include <algorithm>
#include <cmath>
#include <memory>
#include <string>
#include <utility>

#include "core/error.hpp"
#include "integrators/rk4.hpp"
#include "run/batch_work.hpp"
#include "run/gaussian_lanes.hpp"
#include "run/member_noise.hpp"
#include "run/schedule.hpp"

namespace chaosweep::run {
namespace {

/// Index of observable `name` in the model's observables(); throws if there is none.
int observable_index(const models::Model& model, const std::string& name) {
  const auto& all = model.observables();
  for (std::size_t i = 0; i < all.size(); ++i) {
    if (all[i].name == name) return static_cast<int>(i);
  }
  throw Error("the model has no observable `" + name + "`");
}

void resolve_regimes(const spec::Regimes& r, const plan::Plan& plan, const models::Model& model,
                     Setup& s) {
  s.n_regimes = static_cast<int>(plan.regime_labels.size());
  s.regime_kind = s.n_regimes == 0 ? spec::RegimeKind::none : r.kind;
  if (s.n_regimes > 0 && r.kind == spec::RegimeKind::none) {
    throw Error("regime labels are given without a regime kind");
  }
  if (s.regime_kind == spec::RegimeKind::sign) {
    if (s.n_regimes != 2) throw Error("sign regimes need exactly two labels");
    s.regime_coordinates = {observable_index(model, r.observable)};
  } else if (s.regime_kind == spec::RegimeKind::nearest) {
    for (const std::string& name : r.coordinates) {
      s.regime_coordinates.push_back(observable_index(model, name));
    }
    if (r.coordinates.empty()) {
      for (int i = 0; i < model.state_dim(); ++i) s.regime_coordinates.push_back(i);
    }
    s.centroids = r.centroids;
    if (static_cast<int>(s.centroids.size()) != s.n_regimes) {
      throw Error("nearest regimes need one centroid per label");
    }
    for (const auto& c : s.centroids) {
      if (c.size() != s.regime_coordinates.size()) {
        throw Error("every regime centroid needs one value per coordinate");
      }
    }
  }
}


/// Base state reached on the attractor: the model's default initial state integrated for
/// `steps` steps of dt (the plan's attractor spin-up) with the batch stepper at full width (every column identical), so the
/// result is the same on every rank that computes it.
std::vector<double> attractor_state(const models::Model& model, int width, std::int64_t steps,
                                    double dt) {
  const int d = model.state_dim();
  const std::vector<double> start = model.default_initial_state();
  std::vector<double> x(static_cast<std::size_t>(d) * width);
  for (int i = 0; i < d; ++i) {
    for (int m = 0; m < width; ++m) x[static_cast<std::size_t>(i) * width + m] = start[i];
  }
  integrators::Rk4Batch stepper(model, width);
  for (std::int64_t k = 0; k < steps; ++k) stepper.step(x.data(), dt);
  std::vector<double> base(static_cast<std::size_t>(d));
  for (int i = 0; i < d; ++i) {
    base[i] = x[static_cast<std::size_t>(i) * width];
    if (!std::isfinite(base[i])) {
      throw SpinupDiverged("the spin-up to the attractor (" + std::to_string(steps) +
                           " steps) ended on a non-finite state");
    }
  }
  return base;
}

/// The initial states of members first .. first + count - 1 of the case keyed `case_index`,
/// [count][dim]: component i of member m is base_i + scale noise_m(i), the member's own draw i
/// (MemberNoise). Gaussian draws are computed for all the members side by side, component by
/// component (gaussian_row: bitwise MemberNoise::gaussian, a vector register of members at a
/// time), so that a short member's set-up costs little beside its steps.
std::vector<double> perturbed_states(const spec::Ensemble& ensemble,
                                     const std::vector<double>& base, std::int64_t case_index,
                                     std::int64_t first, int count) {
  const std::size_t d = base.size(), n = static_cast<std::size_t>(count);
  const double scale = ensemble.perturbation.scale;
  std::vector<double> x(n * d);
  if (ensemble.perturbation.distribution != spec::Distribution::gaussian) {
    for (std::size_t m = 0; m < n; ++m) {
      const MemberNoise noise(ensemble.seed, case_index, first + static_cast<std::int64_t>(m));
      for (std::size_t i = 0; i < d; ++i) x[m * d + i] = base[i] + scale * noise.uniform(i);
    }
    return x;
  }
  std::vector<std::uint64_t> keys(n);
  for (std::size_t m = 0; m < n; ++m) {
    keys[m] = MemberNoise(ensemble.seed, case_index, first + static_cast<std::int64_t>(m)).key();
  }
  std::vector<double> draws(n);
  for (std::size_t i = 0; i < d; ++i) {
    gaussian_row(keys.data(), count, i, 1.0, draws.data(), nullptr);
    for (std::size_t m = 0; m < n; ++m) x[m * d + i] = base[i] + scale * draws[m];
  }
  return x;
}

}  // namespace

Setup make_setup(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c,
                 const models::Model& model) {
  Setup s;
  s.model = spec.model;
  s.model_info = plan.model;
  s.parameters = parameters_at_start(spec, c);
  s.width = plan.batch_size;
  s.state_dim = model.state_dim();
  s.n_model_observables = static_cast<int>(model.observables().size());
  if (s.width < 1) throw Error("the plan's batch size must be at least 1");
  if (plan.state_dim != 0 && plan.state_dim != s.state_dim) {
    throw Error("the plan's state dimension does not match the model");
  }
  s.dt = spec.integration.dt;
  s.spinup_steps = plan.spinup_steps;
  s.total_steps = plan.total_steps();
  s.trajectory_every = plan.trajectory_every_steps;
  s.trajectory_samples = s.trajectory_every > 0 ? plan.trajectory_samples : 0;
  s.trajectory_members = s.trajectory_every > 0 ? plan.trajectory_members : 0;
  s.observables = plan.observable_index;
  resolve_regimes(spec.statistics.regimes, plan, model, s);
  if (spec.statistics.histogram.enabled) {
    s.histogram = spec.statistics.histogram;
    s.histogram_observable = observable_index(model, spec.statistics.histogram.observable);
  }
  std::vector<int> used = s.observables;
  used.insert(used.end(), s.regime_coordinates.begin(), s.regime_coordinates.end());
  if (s.histogram) used.push_back(s.histogram_observable);
  for (int i : used) {
    if (i < 0 || i >= s.n_model_observables) throw Error("observable index out of range");
    if (i >= s.state_dim) s.needs_derived = true;
  }
  if (spec.schedule.kind != spec::ScheduleKind::none) {
    s.schedule = spec.schedule;
    s.schedule_offset = schedule_offset(spec, c);
  }
  s.snapshot_every = plan.snapshot_every_steps;
  s.snapshot_count = plan.snapshot_count;
  s.response_every = plan.response_every_steps;
  s.response_samples = plan.response_samples;
  s.response_lags = plan.response_lags;
  s.response_groups = plan.response_groups;
  s.members = plan.members;
  s.method = spec.integration.method;
  s.noise = spec.noise;
  if (spec.noise.amplitude_swept) {
    s.noise.amplitude = c.parameters.at(spec::kNoiseAmplitudeAxis).at(0);
  }
  s.seed = spec.ensemble.seed;
  s.case_index = c.index;
  s.key_case = spec::key_case(spec.ensemble, c.index);
  s.kernel = choose_kernel(s);
  s.twins.times = plan.twins;
  s.twins.scale = spec.statistics.twins.scale;
  s.twins.threshold = spec.statistics.twins.threshold;
  s.twins.seed = spec.ensemble.seed;
  return s;
}

std::vector<double> member_initial_state(const spec::Spec& spec, const std::vector<double>& base,
                                         std::int64_t case_index, std::int64_t member) {
  return perturbed_states(spec.ensemble, base, spec::key_case(spec.ensemble, case_index), member,
                          1);
}

struct CaseRunner::Impl {
  std::int64_t case_index = 0;
  spec::Ensemble ensemble;
  std::unique_ptr<models::Model> model;
  Setup setup;
  std::vector<double> base;
};

std::vector<double> case_base_state(const spec::Spec& spec, const plan::Plan& plan,
                                    const plan::Case& c) {
  const spec::InitialState& initial = spec.ensemble.initial;
  if (initial.kind != spec::InitialKind::attractor) return initial.state;
  if (plan.batch_size < 1) throw Error("the plan's batch size must be at least 1");
  // Paired cases start around the reference case's attractor (a plan cut to cases without
  // the reference, such as check's timing piece, falls back to the case's own).
  const std::int64_t key = spec::key_case(spec.ensemble, c.index);
  const auto reference = std::find_if(plan.cases.begin(), plan.cases.end(),
                                      [&](const plan::Case& k) { return k.index == key; });
  const plan::Case& source = reference != plan.cases.end() ? *reference : c;
  const std::unique_ptr<models::Model> model =
      plan.model->make(parameters_at_start(spec, source));
  return attractor_state(*model, plan.batch_size, plan.attractor_spinup_steps,
                         spec.integration.dt);
}

namespace {

/// Paired cases with snapshots: the case reports paired differences; unless it is the
/// reference itself, its batches integrate the reference case's members beside their own,
/// from the same base state. A plan cut to cases without the reference (check's timing piece)
/// gets no reference: its differences are then empty (n = 0).
void attach_paired_reference(const spec::Spec& spec, const plan::Plan& plan,
                             const plan::Case& c, const std::vector<double>& base, Setup& setup) {
  const std::int64_t ref = spec.ensemble.pair_with_case;
  if (ref < 0 || plan.snapshot_count == 0) return;
  setup.paired_snapshots = true;
  if (c.index == ref) return;
  const auto found = std::find_if(plan.cases.begin(), plan.cases.end(),
                                  [&](const plan::Case& k) { return k.index == ref; });
  if (found == plan.cases.end()) return;
  auto paired = std::make_shared<PairedReference>();
  paired->model = plan.model->make(parameters_at_start(spec, *found));
  paired->setup = make_setup(spec, plan, *found, *paired->model);
  paired->base = base;
  setup.paired = std::move(paired);
}

}  // namespace

CaseRunner::CaseRunner(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c)
    : CaseRunner(spec, plan, c, case_base_state(spec, plan, c)) {}

CaseRunner::CaseRunner(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c,
                       std::vector<double> base)
    : impl_(std::make_unique<Impl>()) {
  impl_->case_index = c.index;
  impl_->ensemble = spec.ensemble;
  impl_->model = plan.model->make(parameters_at_start(spec, c));
  impl_->setup = make_setup(spec, plan, c, *impl_->model);
  impl_->base = std::move(base);
  attach_paired_reference(spec, plan, c, impl_->base, impl_->setup);
  if (static_cast<int>(impl_->base.size()) != impl_->setup.state_dim) {
    throw Error("the initial state needs " + std::to_string(impl_->setup.state_dim) +
                " components");
  }
}

CaseRunner::~CaseRunner() = default;

const std::vector<double>& CaseRunner::base_state() const { return impl_->base; }

namespace {

void check_batch(const plan::Batch& batch, std::int64_t case_index, const Setup& setup) {
  if (batch.case_index != case_index) throw Error("a batch was given to another case's runner");
  if (batch.count < 1 || batch.count > setup.width) throw Error("batch count out of range");
}

}  // namespace

BatchResult CaseRunner::run(const plan::Batch& batch) const {
  const std::unique_ptr<BatchProgress> progress = start(batch);
  progress->advance(progress->total_steps());
  return progress->finish();
}

std::unique_ptr<BatchProgress> CaseRunner::start(const plan::Batch& batch) const {
  const Impl& p = *impl_;
  check_batch(batch, p.case_index, p.setup);
  std::vector<double> initial =
      perturbed_states(p.ensemble, p.base, p.setup.key_case, batch.first_member, batch.count);
  return std::make_unique<BatchWork>(p.setup, *p.model, p.base, batch, std::move(initial));
}

std::unique_ptr<BatchProgress> CaseRunner::resume(const plan::Batch& batch,
                                                  const BatchState& state) const {
  const Impl& p = *impl_;
  check_batch(batch, p.case_index, p.setup);
  return std::make_unique<BatchWork>(p.setup, *p.model, p.base, batch, state);
}

}  // namespace chaosweep::run
