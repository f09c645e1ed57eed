// The response predicted from fluctuations (see reduce.hpp): every case's response sums, added
// along the fixed merge tree (bitwise the same for any number of ranks), give the prediction
// of stats::predict_response for each of the model's additive forcings, whose direction is
// evaluated with the case's own parameters.
#include <cmath>

#include "parallel/batch_summary.hpp"
#include "parallel/reduce.hpp"
#include "stats/lagged_sums.hpp"

namespace chaosweep::parallel {

void reduce_predicted_response(const spec::Spec& spec, const plan::Plan& plan,
                               const MergedCases& merged, EnsembleResults& r) {
  if (!plan.outputs.response) return;
  const stats::LagSumsLayout layout{plan.observables.size(),
                                    static_cast<std::size_t>(plan.state_dim)};
  const std::size_t n_cases = plan.cases.size(), n_obs = plan.observables.size();
  const std::size_t forcings = plan.model->additive_forcings.size();
  r.predicted_slope.assign(forcings * n_cases * n_obs, NAN);
  r.predicted_slope_stderr.assign(forcings * n_cases * n_obs, NAN);
  const double every = static_cast<double>(plan.response_every_steps) * spec.integration.dt;
  for (std::size_t c = 0; c < n_cases; ++c) {
    std::vector<std::vector<double>> directions;
    for (const models::AdditiveForcing& f : plan.model->additive_forcings) {
      directions.push_back(f.direction(plan.cases[c].parameters));
    }
    const stats::PredictedResponse p = stats::predict_response(
        layout, merged.at(c, merged.parts.response), plan.response_groups, plan.response_lags,
        plan.response_samples, every, directions);
    for (std::size_t f = 0; f < forcings; ++f) {
      for (std::size_t o = 0; o < n_obs; ++o) {
        const std::size_t at = (f * n_cases + c) * n_obs + o;
        r.predicted_slope[at] = p.slope[f * n_obs + o];
        r.predicted_slope_stderr[at] = p.stderr_[f * n_obs + o];
      }
    }
  }
}

}  // namespace chaosweep::parallel
