// lorenz96: the Lorenz (1996) one-level model on a ring of n sites.
//
//   dx_k/dt = (x_{k+1} - x_{k-2}) x_{k-1} - x_k + F,   k = 0 .. n-1, indices cyclic (mod n)
//
// Source: E. N. Lorenz (1996), "Predictability: a problem partly solved", Proc. ECMWF
// Seminar on Predictability, vol. 1, 1-18. The quadratic (advection) term conserves
// sum_k x_k^2 / 2; the linear term damps it and the constant F forces it.
//
// Parameters (defaults): n 40 (number of sites; integer >= 4; structural: fixes the state
// dimension), F 8 (forcing). Time unit: about 5 days in Lorenz's interpretation.
//
// Observables: x0 .. x{n-1} (the state), then derived
//   site_mean = (1/n) sum_k x_k     (mean over the sites)
//   energy    = sum_k x_k^2 / 2     (total energy)
// Pure numerics: no allocation in rhs() or derived(), no I/O.
#include <cmath>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "integrators/lanes.hpp"
#include "models/fused_tangent.hpp"
#include "models/lorenz96_equations.hpp"
#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {
namespace {

constexpr double kRk4RealAxisLimit = 2.785;  // classical RK4: |h lambda| <= 2.785 on the real axis

class Lorenz96 final : public Model {
 public:
  explicit Lorenz96(const ParameterValues& v)
      : n_(static_cast<int>(scalar_parameter(v, "n"))),
        forcing_(scalar_parameter(v, "F")),
        equations_(Lorenz96Equations::from(v)) {
    if (static_cast<double>(n_) != scalar_parameter(v, "n") || n_ < 4) {
      throw std::invalid_argument("lorenz96 needs an integer n >= 4.");
    }
    for (int k = 0; k < n_; ++k) {
      observables_.push_back({"x" + std::to_string(k), "site " + std::to_string(k) + " variable"});
    }
    observables_.push_back({"site_mean", "mean of the site variables over the ring"});
    observables_.push_back({"energy", "total energy, sum of x_k^2 / 2"});
  }

  int state_dim() const override { return n_; }
  const std::vector<ObservableInfo>& observables() const override { return observables_; }

  // x, dxdt: [n][width]. For each site k the neighbour rows are fixed, so the inner loop over
  // members is a plain streaming loop; ivdep states that dxdt does not alias x (interface).
  // The cyclic neighbours are resolved per site with compares, not a division per site. The
  // arithmetic is Lorenz96Equations::site, shared with the fused ring kernel.
  void rhs(const double* x, double* dxdt, int width) const override {
    const int n = n_;
    const Lorenz96Equations e = equations_;
    for (int k = 0; k < n; ++k) {
      const int kp1 = k + 1 < n ? k + 1 : k + 1 - n;
      const int km1 = k >= 1 ? k - 1 : k - 1 + n;
      const int km2 = k >= 2 ? k - 2 : k - 2 + n;
      const double* xp1 = x + static_cast<long>(kp1) * width;
      const double* xm1 = x + static_cast<long>(km1) * width;
      const double* xm2 = x + static_cast<long>(km2) * width;
      const double* xk = x + static_cast<long>(k) * width;
      double* out = dxdt + static_cast<long>(k) * width;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) out[m] = e.site(xm2[m], xm1[m], xk[m], xp1[m]);
    }
  }

  bool has_tangent() const override { return true; }

  // out = J(x) v: the linearised site equation (Lorenz96Equations::site_tangent)
  //   out_k = (v_{k+1} - v_{k-2}) x_{k-1} + (x_{k+1} - x_{k-2}) v_{k-1} - v_k.
  void tangent(const double* x, const double* v, double* out, int width) const override {
    const int n = n_;
    for (int k = 0; k < n; ++k) {
      const int kp1 = k + 1 < n ? k + 1 : k + 1 - n;
      const int km1 = k >= 1 ? k - 1 : k - 1 + n;
      const int km2 = k >= 2 ? k - 2 : k - 2 + n;
      const long w = width;
      const double* xp1 = x + kp1 * w;
      const double* xm1 = x + km1 * w;
      const double* xm2 = x + km2 * w;
      const double* vp1 = v + kp1 * w;
      const double* vm1 = v + km1 * w;
      const double* vm2 = v + km2 * w;
      const double* vk = v + k * w;
      double* o = out + k * w;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) {
        o[m] = Lorenz96Equations::site_tangent(xm2[m], xm1[m], xp1[m], vm2[m], vm1[m], vk[m],
                                               vp1[m]);
      }
    }
  }

  std::size_t fused_tangent_rk4_scratch(int width) const override {
    (void)width;
    return fused_tangent_rows_scratch(n_);
  }

  // The state and its tangent vectors one register of members at a time, each stage one sweep
  // around the ring (models/fused_tangent.hpp, fused_tangent_rows).
  bool fused_tangent_rk4_step(double* x, double* tangents, int vectors, double dt, int width,
                              double* scratch) const override {
    using integrators::load_lanes;
    constexpr int kL = integrators::kLanes;
    const int n = n_;
    if (width % kL != 0 || n < 4) return false;
    const Lorenz96Equations e = equations_;
    auto at = [](const double* p, int k) { return load_lanes(p + static_cast<long>(k) * kL); };
    auto neighbours = [n](int k, int& km2, int& km1, int& kp1) {
      kp1 = k + 1 < n ? k + 1 : k + 1 - n;
      km1 = k >= 1 ? k - 1 : k - 1 + n;
      km2 = k >= 2 ? k - 2 : k - 2 + n;
    };
    auto tendencies = [&](const double* in, auto out) {
      for (int k = 0, km2, km1, kp1; k < n; ++k) {
        neighbours(k, km2, km1, kp1);
        out(k, e.site(at(in, km2), at(in, km1), at(in, k), at(in, kp1)));
      }
    };
    auto products = [&](const double* s, const double* in, auto out) {
      for (int k = 0, km2, km1, kp1; k < n; ++k) {
        neighbours(k, km2, km1, kp1);
        out(k, Lorenz96Equations::site_tangent(at(s, km2), at(s, km1), at(s, kp1), at(in, km2),
                                               at(in, km1), at(in, k), at(in, kp1)));
      }
    };
    fused_tangent_rows(n, x, tangents, vectors, dt, width, scratch, tendencies, products);
    return true;
  }

  // out: [2][width]: row 0 site_mean, row 1 the energy; sites summed in order 0..n-1
  // with Lorenz96Equations' derived-observable arithmetic (shared with the ring kernel).
  void derived(const double* x, double* out, int width) const override {
    const Lorenz96Equations e = equations_;
    double* mean = out;
    double* energy = out + width;
    for (int m = 0; m < width; ++m) mean[m] = energy[m] = 0.0;
    for (int k = 0; k < n_; ++k) {
      const double* xk = x + static_cast<long>(k) * width;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) e.add_site(xk[m], mean[m], energy[m]);
    }
    for (int m = 0; m < width; ++m) {
      mean[m] = e.mean(mean[m]);
      energy[m] = e.energy(energy[m]);
    }
  }

  // Estimate: for a uniform state x_k = X the Jacobian is circulant with eigenvalues
  // -1 + X (e^{i t} - e^{-2 i t}), t = 2 pi l / n, of modulus at most 1 + 2|X|. With X = F this
  // gives 1 + 2|F|; sampled along attractor trajectories (n 4..100, F 1..30) the largest
  // spectral radius was 0.7-1.03 times that, so a margin of 1.25 is applied. Defaults give
  // dt 0.131; the sampled blow-up step there is about 0.19.
  double max_stable_dt() const override {
    return kRk4RealAxisLimit / (1.25 * (1.0 + 2.0 * std::abs(forcing_)));
  }

  // The steady state x_k = F with a small bump at site 0 (the steady state is unstable for
  // F > 0.894 at n = 40, so the bump grows into the attractor).
  std::vector<double> default_initial_state() const override {
    std::vector<double> x(static_cast<std::size_t>(n_), forcing_);
    x[0] += 0.01;
    return x;
  }

  // Slot 0: F (n is structural).
  int parameter_slot(const std::string& name) const override { return name == "F" ? 0 : -1; }

  void set_parameter(int slot, double value) override {
    if (slot != 0) Model::set_parameter(slot, value);
    forcing_ = equations_.F = value;
  }

 private:
  int n_;
  double forcing_;
  Lorenz96Equations equations_;
  std::vector<ObservableInfo> observables_;
};

ModelInfo lorenz96_info() {
  ModelInfo info;
  info.name = "lorenz96";
  info.description =
      "Lorenz (1996) ring model, ECMWF seminar \"Predictability: a problem partly solved\"";
  info.parameters = {
      {"n", {40.0}, 4.0, 1e6, true, true, "number of sites on the ring"},
      {"F", {8.0}, -1e300, 1e300, false, false, "constant forcing"},
  };
  info.make = [](const ParameterValues& v) -> std::unique_ptr<Model> {
    return std::make_unique<Lorenz96>(v);
  };
  info.state_dim = [](const ParameterValues& v) {
    return static_cast<int>(scalar_parameter(v, "n"));
  };
  // + F on every site
  info.additive_forcings = {{"F", [](const ParameterValues& v) {
                               const auto n = static_cast<std::size_t>(scalar_parameter(v, "n"));
                               return std::vector<double>(n, 1.0);
                             }}};
  info.fast_kernel = FastKernel::ring;
  return info;
}

const Registrar registrar(lorenz96_info());

}  // namespace
}  // namespace chaosweep::models
