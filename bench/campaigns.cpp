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

namespace {

/// One model's counted costs (an FMA is 2 flops): one right-hand side, one tangent product
/// J v as the equations need it, the state dimension, and the statistics of bench_campaign.
struct ModelCost {
  double rhs = 0.0, tangent = 0.0, dim = 0.0, statistics = 0.0;
};

// Counted from the equations (an FMA is 2 flops; compares and integer regime counts are 0):
//  lorenz63: rhs 11 (sigma (y - x) + f0: 3; x (rho - z) - y + f1: 4; x y - beta z + f2: 4);
//    J v 12 (sigma (v_y - v_x): 2; (rho - z) v_x - x v_z - v_y: 5; y v_x + x v_y - beta v_z: 5).
//  lorenz84: rhs 17 (-y y - z z - a x + aF: 6; x y - b x z - y + G: 6; b x y + x z - z: 5);
//    J v 25 (-a v_x - 2 y v_y - 2 z v_z: 7; (y - b z) v_x + (x - 1) v_y - b x v_z: 9;
//    (b y + z) v_x + b x v_y + (x - 1) v_z: 9).
//  lorenz96 per site: rhs 4 ((x_{k+1} - x_{k-2}) x_{k-1} - x_k + F); J v 6
//    ((v_{k+1} - v_{k-2}) x_{k-1} + (x_{k+1} - x_{k-2}) v_{k-1} - v_k).
//  lorenz96-two-scale: rhs K (4 + 2 J) (a slow tendency of 4 and J multiply-subtracts of the
//    coupling) and K J 7 (-c b y_{l+1} (y_{l+2} - y_{l-1}): 3, - c y_l + h c / b x_k: 4);
//    J v K (7 + J) and K J 10 (the product rule on the advection: 6, - c v_l + h c / b v_x: 4).
//  RK4: 4 right-hand sides, 3 stage inputs x + c k of 2 and the update
//    ((k1 + 2 k2) + 2 k3 + k4) dt/6 + x of 7 per variable: 4 rhs + 13 dim.
//  time moments: d = v - shift, s1 += d, s2 += d d: 4 per observable.
//  extremes: a min and a max per observable, comparisons: 0.
//  histogram: (v - low) scale and two edges low + b width: 6.
ModelCost model_cost(const spec::Spec& s) {
  ModelCost c;
  if (s.model == kTwoScale) {
    const double K = s.parameters.at("K")[0], J = s.parameters.at("J")[0];
    c.dim = K + K * J;
    c.rhs = K * (4.0 + 2.0 * J) + K * J * 7.0;
    c.tangent = K * (7.0 + J) + K * J * 10.0;
    c.statistics = 3.0 * K + 2.0 + 4.0 * (K + 2.0);  // site mean and energy; the moments
  } else if (s.model == "lorenz63" || s.model == "lorenz84") {
    const bool l63 = s.model == "lorenz63";
    c.dim = 3.0;
    c.rhs = l63 ? 11.0 : 17.0;
    c.tangent = l63 ? 12.0 : 25.0;
    c.statistics = 4.0 * 3.0;
  } else {
    const double n = s.parameters.at("n")[0];
    c.dim = n;
    c.rhs = 4.0 * n;
    c.tangent = 6.0 * n;
    c.statistics = 3.0 * n + 2.0 + 4.0 * (n + 2.0);  // mean and energy; every observable's moments
  }
  if (s.statistics.histogram.enabled) c.statistics += 6.0;
  return c;
}

}  // namespace

// The integration of the members (RK4; under noise the stochastic scheme: Euler-Maruyama
// rhs + 5 dim, x + dt f + sqrt(dt) A N; Heun 2 rhs + 10 dim, the predictor, the average and the
// noise; the Gaussian draws' own work, mostly integer, is not counted), the statistics, then
// what the extra integrations add: a twin is a second member (its integration, and its
// separation, 3 dim, at every lead); Lyapunov exponents integrate the member again with k
// tangent vectors (the tangent of the RK4 map: 4 J v + 13 dim each) and re-orthonormalise them
// by modified Gram-Schmidt (2 dim k^2 + 3 dim k) at every renormalisation.
double flops_per_member_step(const spec::Spec& s) {
  const ModelCost c = model_cost(s);
  double step = 4.0 * c.rhs + 13.0 * c.dim;
  if (s.noise.kind != spec::NoiseKind::none) {
    step = s.integration.method == "heun" ? 2.0 * c.rhs + 10.0 * c.dim : c.rhs + 5.0 * c.dim;
  }
  double flops = step + c.statistics;
  const double dt = s.integration.dt;
  if (s.statistics.twins.enabled) {
    flops += step + 3.0 * c.dim * dt / s.statistics.twins.every;
  }
  if (s.statistics.lyapunov.enabled) {
    const double k = s.statistics.lyapunov.exponents;
    flops += step + k * (4.0 * c.tangent + 13.0 * c.dim) +
             (2.0 * c.dim * k * k + 3.0 * c.dim * k) * dt / s.statistics.lyapunov.renormalise_every;
  }
  return flops;
}

}  // namespace chaosweep::bench
