// Spec -> cases x members -> batches. Pure: no MPI, no HDF5, no YAML.
#include "plan/plan.hpp"

#include "stats/lagged_sums.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <stdexcept>

#include "core/error.hpp"
#include "plan/member_output.hpp"

namespace chaosweep::plan {
std::int64_t whole_steps(double span, double dt) {
  return static_cast<std::int64_t>(std::llround(span / dt));
}

namespace {

/// Shortest decimal text (up to 17 significant digits) that reads back as exactly `value`.
std::string shortest(double value) {
  char text[32];
  for (int digits = 1; digits <= 17; ++digits) {
    std::snprintf(text, sizeof text, "%.*g", digits, value);
    if (std::strtod(text, nullptr) == value) break;
  }
  return text;
}

/// Cartesian product of the sweep axes, the last axis varying fastest.
std::vector<Case> make_cases(const spec::Spec& spec) {
  std::vector<Case> cases(1);
  cases[0].parameters = spec.parameters;
  for (const spec::SweepAxis& axis : spec.sweep) {
    std::vector<Case> grown;
    grown.reserve(cases.size() * axis.values.size());
    for (const Case& base : cases) {
      for (double value : axis.values) {
        Case c = base;
        c.axis_values.push_back(value);
        c.parameters[axis.parameter] = {value};
        grown.push_back(std::move(c));
      }
    }
    cases = std::move(grown);
  }
  for (std::size_t i = 0; i < cases.size(); ++i) cases[i].index = static_cast<std::int64_t>(i);
  return cases;
}

}  // namespace

std::string describe_case(const spec::Spec& spec, const Case& c) {
  std::string text = "case " + std::to_string(c.index);
  for (std::size_t a = 0; a < spec.sweep.size() && a < c.axis_values.size(); ++a) {
    text += (a == 0 ? " (" : ", ") + spec.sweep[a].parameter + " " + shortest(c.axis_values[a]);
  }
  return spec.sweep.empty() ? text : text + ")";
}

namespace {

void select_observables(const spec::Spec& spec, const models::Model& model, Plan& plan) {
  const auto& all = model.observables();
  for (int i = 0; i < model.state_dim(); ++i) plan.state_names.push_back(all[i].name);
  for (const std::string& name : spec.statistics.observables) {
    for (std::size_t i = 0; i < all.size(); ++i) {
      if (all[i].name == name) {
        plan.observables.push_back(name);
        plan.observable_index.push_back(static_cast<int>(i));
      }
    }
  }
  if (plan.observables.empty()) {
    for (std::size_t i = 0; i < all.size(); ++i) {
      plan.observables.push_back(all[i].name);
      plan.observable_index.push_back(static_cast<int>(i));
    }
  }
}

}  // namespace

Plan make_plan(const spec::Spec& spec) {
  const models::ModelInfo* info = models::Registry::instance().find(spec.model);
  if (!info) throw Error("unknown model `" + spec.model + "`");
  const std::unique_ptr<models::Model> model = info->make(spec.parameters);

  Plan plan;
  plan.model = info;
  plan.cases = make_cases(spec);
  plan.members = spec.ensemble.members;
  plan.batch_size = spec.run.batch_size;
  plan.state_dim = model->state_dim();
  select_observables(spec, *model, plan);
  plan.regime_labels = spec.statistics.regimes.labels;

  const double dt = spec.integration.dt;
  plan.spinup_steps = whole_steps(spec.integration.spinup, dt);
  plan.accumulate_steps = whole_steps(spec.integration.duration, dt);
  plan.archived_members = archived_members(spec.output, plan.members);
  const spec::Trajectories& traj = spec.output.trajectories;
  if (traj.members > 0) {
    plan.trajectory_members = static_cast<int>(std::min<std::int64_t>(traj.members, plan.members));
    plan.trajectory_every_steps = std::max<std::int64_t>(1, whole_steps(traj.every, dt));
    plan.trajectory_samples = plan.total_steps() / plan.trajectory_every_steps + 1;
  }
  const spec::Snapshots& snap = spec.statistics.snapshots;
  if (snap.enabled) {
    plan.snapshot_every_steps = std::max<std::int64_t>(1, whole_steps(snap.every, dt));
    plan.snapshot_count = plan.accumulate_steps / plan.snapshot_every_steps + 1;
  }
  const spec::Twins& twins = spec.statistics.twins;
  if (twins.enabled) {
    plan.twins.start_step = plan.spinup_steps;
    plan.twins.every_steps = std::max<std::int64_t>(1, whole_steps(twins.every, dt));
    plan.twins.leads = plan.accumulate_steps / plan.twins.every_steps + 1;
  }
  const spec::Response& response = spec.statistics.response;
  if (response.enabled) {
    plan.response_every_steps = std::max<std::int64_t>(1, whole_steps(response.every, dt));
    plan.response_samples = plan.accumulate_steps / plan.response_every_steps + 1;
    plan.response_lags = static_cast<int>(std::llround(response.max_lag / response.every));
    plan.response_groups = static_cast<int>(std::min<std::int64_t>(response.groups, plan.members));
    for (const models::AdditiveForcing& f : plan.model->additive_forcings) {
      plan.forcings.push_back(f.parameter);
    }
  }
  if (spec.ensemble.pair_with_case >= 0 && !spec.sweep.empty()) {
    plan.pair_groups = static_cast<int>(std::min<std::int64_t>(kPairGroups, plan.members));
  }
  const spec::Lyapunov& lyapunov = spec.statistics.lyapunov;
  if (lyapunov.enabled) {
    plan.lyapunov_every_steps =
        std::max<std::int64_t>(1, whole_steps(lyapunov.renormalise_every, dt));
  }
  if (spec.ensemble.initial.kind == spec::InitialKind::attractor) {
    plan.attractor_spinup_steps = whole_steps(spec.ensemble.initial.spinup, dt);
  }
  plan.lyapunov_exponents = lyapunov.enabled ? lyapunov.exponents : 0;
  plan.histogram_bins = spec.statistics.histogram.enabled ? spec.statistics.histogram.bins : 0;
  plan.sweep_axes = static_cast<int>(spec.sweep.size());
  results::Options& out = plan.outputs;
  out.sweep = !spec.sweep.empty();
  out.regimes = !plan.regime_labels.empty();
  out.lyapunov = lyapunov.enabled;
  out.twins = twins.enabled;
  out.histogram = spec.statistics.histogram.enabled;
  out.snapshots = plan.snapshot_count > 0;
  out.trajectories = plan.trajectory_members > 0;
  out.paired = spec.ensemble.pair_with_case >= 0;
  out.response = response.enabled;
  return plan;
}

std::int64_t Plan::batches_per_case() const {
  if (members < 1 || batch_size < 1) return 0;
  return (members + batch_size - 1) / batch_size;
}

std::int64_t Plan::batch_count() const {
  return static_cast<std::int64_t>(cases.size()) * batches_per_case();
}

Batch Plan::batch(std::int64_t index) const {
  if (index < 0 || index >= batch_count()) {
    throw std::out_of_range("batch " + std::to_string(index) + " of a plan of " +
                            std::to_string(batch_count()));
  }
  const std::int64_t per_case = batches_per_case();
  Batch b;
  b.index = index;
  b.case_index = cases[static_cast<std::size_t>(index / per_case)].index;
  b.first_member = (index % per_case) * batch_size;
  b.count = static_cast<int>(std::min<std::int64_t>(batch_size, members - b.first_member));
  return b;
}

std::uint64_t Plan::extent(const std::string& dim) const {
  const auto n = [](auto v) { return static_cast<std::uint64_t>(v); };
  if (dim == "case") return n(cases.size());
  if (dim == "member") return n(members);
  if (dim == "state" || dim == "variable") return n(state_dim);
  if (dim == "observable") return n(observables.size());
  if (dim == "regime") return n(regime_labels.size());
  if (dim == "bound" || dim == "window_edge") return 2;
  if (dim == "moment") return 3;
  if (dim == "exponent") return n(lyapunov_exponents);
  if (dim == "axis") return n(sweep_axes);
  if (dim == "lead") return n(twins.leads);
  if (dim == "bin") return n(histogram_bins);
  if (dim == "edges") return histogram_bins > 0 ? n(histogram_bins + 1) : 0;
  if (dim == "time") return n(snapshot_count);
  if (dim == "sample") return n(trajectory_members);
  if (dim == "step") return n(trajectory_samples);
  if (dim == "forcing_parameter") return n(forcings.size());
  if (dim == "response_group") return n(response_groups);
  if (dim == "response_sum") {
    return n(stats::LagSumsLayout{observables.size(), static_cast<std::size_t>(state_dim)}.width());
  }
  throw std::logic_error("no extent for dimension " + dim);
}

Range share(std::int64_t n, int rank, int size) {
  const std::int64_t base = n / size;
  const std::int64_t extra = n % size;
  Range r;
  r.first = rank * base + std::min<std::int64_t>(rank, extra);
  r.last = r.first + base + (rank < extra ? 1 : 0);
  return r;
}

int owner(std::int64_t n, std::int64_t index, int size) {
  if (index < 0 || index >= n || size < 1) {
    throw std::out_of_range("item " + std::to_string(index) + " outside [0, " +
                            std::to_string(n) + ")");
  }
  const std::int64_t base = n / size, extra = n % size;
  const std::int64_t longer = extra * (base + 1);  // items of the ranks that get one more
  if (index < longer) return static_cast<int>(index / (base + 1));
  return static_cast<int>(extra + (index - longer) / base);
}

}  // namespace chaosweep::plan
