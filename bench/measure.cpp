// Timing helpers; see measure.hpp.
#include "measure.hpp"

#include <algorithm>
#include <cmath>
#include <ctime>
#include <memory>

#include "core/error.hpp"
#include "integrators/reference.hpp"
#include "models/model.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/lyapunov.hpp"
#include "stats/ensemble.hpp"
#include "stats/histogram.hpp"

namespace chaosweep::bench {
namespace {

int observable_index(const models::Model& model, const std::string& name) {
  const auto& all = model.observables();
  for (std::size_t i = 0; i < all.size(); ++i) {
    if (all[i].name == name) return static_cast<int>(i);
  }
  throw Error("no observable " + name);
}

/// The plain statistics of one member, updated once per step from its observables.
struct PlainStatistics {
  std::vector<stats::Moments> moments;        // [observables], Welford per step
  std::int64_t steps_in[2] = {0, 0}, episodes[2] = {0, 0}, transitions = 0;
  int previous = -1;
  std::unique_ptr<stats::MemberHistogram> histogram;
};

}  // namespace

double thread_cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

Summary summarise(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  Summary s;
  if (values.empty()) return s;
  const std::size_t n = values.size();
  s.median = n % 2 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
  s.min = values.front();
  s.max = values.back();
  return s;
}

double production_rate(const spec::Spec& spec) {
  const plan::Plan plan = plan::make_plan(spec);
  const run::CaseRunner runner(spec, plan, plan.cases[0]);
  std::int64_t member_steps = 0;
  double seconds = 0.0;
  for (std::int64_t index = 0; index < plan.batches_per_case(); ++index) {  // case 0's batches
    const plan::Batch batch = plan.batch(index);
    const std::unique_ptr<run::BatchProgress> progress = runner.start(batch);
    const double start = thread_cpu_seconds();
    progress->advance(progress->total_steps());
    seconds += thread_cpu_seconds() - start;
    run::BatchResult result = progress->finish();
    if (spec.statistics.lyapunov.enabled) {  // the second integration, with tangent vectors
      const double lyapunov_start = thread_cpu_seconds();
      run::add_lyapunov(spec, plan, result);
      seconds += thread_cpu_seconds() - lyapunov_start;
    }
    member_steps += static_cast<std::int64_t>(result.count) * plan.total_steps();
  }
  return static_cast<double>(member_steps) / seconds;
}

double scalar_rate(const spec::Spec& spec, std::int64_t members) {
  const plan::Plan plan = plan::make_plan(spec);
  const run::CaseRunner runner(spec, plan, plan.cases[0]);  // base state, as in production
  const std::unique_ptr<models::Model> model =
      models::Registry::instance().find(spec.model)->make(plan.cases[0].parameters);
  const int d = model->state_dim();
  const int n_all = static_cast<int>(model->observables().size());
  const int regime_index = observable_index(*model, spec.statistics.regimes.observable);
  const spec::Histogram& h = spec.statistics.histogram;
  const int histogram_index = h.enabled ? observable_index(*model, h.observable) : -1;
  std::vector<double> values(static_cast<std::size_t>(n_all));  // state, then derived
  const double dt = spec.integration.dt;
  double sink = 0.0, seconds = 0.0;
  for (std::int64_t m = 0; m < members; ++m) {
    std::vector<double> x = run::member_initial_state(spec, runner.base_state(), 0, m);
    integrators::Rk4Reference rk4(*model);
    PlainStatistics st;
    st.moments.resize(plan.observable_index.size());
    if (h.enabled) {
      st.histogram = std::make_unique<stats::MemberHistogram>(h.bins, h.low, h.high, 1);
    }
    const double start = thread_cpu_seconds();
    for (std::int64_t step = 1; step <= plan.total_steps(); ++step) {
      rk4.step(x.data(), dt);
      if (step <= plan.spinup_steps) continue;
      std::copy(x.begin(), x.end(), values.begin());
      if (n_all > d) model->derived(x.data(), values.data() + d, 1);
      for (std::size_t o = 0; o < st.moments.size(); ++o) {
        st.moments[o].add(values[plan.observable_index[o]]);
      }
      const int regime = values[regime_index] >= 0.0 ? 0 : 1;
      ++st.steps_in[regime];
      if (regime != st.previous) {
        ++st.episodes[regime];
        if (st.previous >= 0) ++st.transitions;
      }
      st.previous = regime;
      if (st.histogram) st.histogram->add(&values[histogram_index]);
    }
    seconds += thread_cpu_seconds() - start;
    sink += st.moments.empty() ? 0.0 : st.moments[0].mean + st.transitions;
  }
  if (std::isnan(sink)) throw Error("the scalar reference run diverged");
  return static_cast<double>(members) * static_cast<double>(plan.total_steps()) / seconds;
}

}  // namespace chaosweep::bench
