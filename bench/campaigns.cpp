// Benchmark campaigns; see campaigns.hpp. The settings follow the example campaigns in
// configs/ (forcing along y for Lorenz-63, dt 0.005; Lorenz-96 at F = 8, dt 0.01; the
// two-scale ring at its defaults, 36 slow x 10 fast sites, dt 0.005).
#include "campaigns.hpp"

#include "core/error.hpp"
#include "models/model.hpp"

namespace chaosweep::bench {

spec::Spec bench_campaign(const std::string& model, long members, int width, long spinup_steps,
                          long steps, bool histogram) {
  const models::ModelInfo* info = models::Registry::instance().find(model);
  const bool l63 = model == "lorenz63", l84 = model == "lorenz84", l96 = model == "lorenz96",
             two_scale = model == kTwoScale;
  if (!info || !(l63 || l84 || l96 || two_scale)) {
    throw UsageError("the benchmark knows lorenz63, lorenz84, lorenz96 and " +
                     std::string(kTwoScale) + ", not `" + model + "`");
  }
  spec::Spec s;
  s.name = "bench-" + model;
  s.model = model;
  s.parameters = l63 ? models::complete_parameters(
                           *info, {{"forcing", {2.0}}, {"forcing_direction", {0.0, 1.0, 0.0}}})
                 : l96 ? models::complete_parameters(*info, {{"n", {40.0}}, {"F", {8.0}}})
                       : models::complete_parameters(*info, {});
  if (two_scale) {  // the slow sites and their derived observables (not the 360 fast sites)
    const int K = static_cast<int>(s.parameters.at("K")[0]);
    for (int k = 0; k < K; ++k) s.statistics.observables.push_back("x" + std::to_string(k));
    s.statistics.observables.push_back("site_mean");
    s.statistics.observables.push_back("energy");
  }
  s.ensemble.members = members;
  s.ensemble.initial.kind = spec::InitialKind::attractor;
  s.ensemble.initial.spinup = 10.0;
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-3};
  s.ensemble.seed = 2026;
  s.integration.dt = l63 || two_scale ? 0.005 : 0.01;
  s.integration.spinup = static_cast<double>(spinup_steps) * s.integration.dt;
  s.integration.duration = static_cast<double>(steps) * s.integration.dt;
  const std::string first = l63 ? "x" : l84 ? "y" : "x0";
  s.statistics.regimes.kind = spec::RegimeKind::sign;
  s.statistics.regimes.observable = first;
  s.statistics.regimes.labels = {"positive", "negative"};
  if (histogram) {
    s.statistics.histogram = l63   ? spec::Histogram{true, first, 80, -25.0, 25.0}
                             : l84 ? spec::Histogram{true, first, 80, -3.0, 3.0}
                                   : spec::Histogram{true, first, 80, -15.0, 25.0};
  }
  s.run.batch_size = width;
  return s;
}

// Counted from the kernels (an FMA is 2 flops; compares and integer regime counts are 0):
//  lorenz63 RK4: 4 right-hand sides of 11 (sigma (y - x) + f0: 3; x (rho - z) - y + f1: 4;
//    x y - beta z + f2: 4), 3 stage inputs x + c k of 2 per variable (18), the update
//    ((k1 + 2 k2) + 2 k3 + k4) dt/6 + x of 7 per variable (21): 83.
//  lorenz84 RK4: 4 right-hand sides of 17 (-y y - z z - a x + aF: 6; x y - b x z - y + G: 6;
//    b x y + x z - z: 5), the stage inputs (18) and the update (21): 107.
//  lorenz96 RK4 per site: 4 tendencies (x_{k+1} - x_{k-2}) x_{k-1} - x_k + F of 4, 3 stage
//    inputs of 2, the update of 7: 29 per site; mean and energy: 3 per site and 2 at the end.
//  lorenz96-two-scale RK4: 4 right-hand sides of K (4 + 2 J) (a slow tendency of 4 and J
//    multiply-subtracts of the coupling) and K J 7 (-c b y_{l+1} (y_{l+2} - y_{l-1}): 3,
//    - c y_l + h c / b x_k: 4), 3 stage inputs of 2 and the update of 7 per variable.
//  time moments: d = v - shift, s1 += d, s2 += d d: 4 per observable.
//  extremes: a min and a max per observable, comparisons: 0.
//  histogram: (v - low) scale and two edges low + b width: 6.
double flops_per_member_step(const spec::Spec& s) {
  double flops = 0.0;
  const bool l63 = s.model == "lorenz63", l84 = s.model == "lorenz84";
  if (s.model == kTwoScale) {
    const double K = s.parameters.at("K")[0], J = s.parameters.at("J")[0], D = K + K * J;
    flops += 4.0 * (K * (4.0 + 2.0 * J) + K * J * 7.0) + 3.0 * 2.0 * D + 7.0 * D;
    flops += 3.0 * K + 2.0 + 4.0 * (K + 2.0);  // site mean and energy; the moments
    if (s.statistics.histogram.enabled) flops += 6.0;
    return flops;
  }
  const double n = l63 || l84 ? 3.0 : s.parameters.at("n")[0];
  const double observables = l63 || l84 ? 3.0 : n + 2.0;  // every observable (bench_campaign)
  flops += l63 ? 83.0 : l84 ? 107.0 : 29.0 * n + 3.0 * n + 2.0;
  flops += 4.0 * observables;
  if (s.statistics.histogram.enabled) flops += 6.0;
  return flops;
}

}  // namespace chaosweep::bench
