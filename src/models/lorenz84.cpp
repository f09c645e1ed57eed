// lorenz84: the Lorenz (1984) low-order model of the mid-latitude general circulation.
//
//   dx/dt = -y^2 - z^2 - a x + a F
//   dy/dt = x y - b x z - y + G
//   dz/dt = b x y + x z - z
//
// x is the strength of the westerly (zonal) wind, y and z the cosine and sine phases of a
// chain of superposed large-scale eddies. F is the symmetric thermal forcing (equator-pole
// temperature contrast), G the asymmetric (land-sea) forcing, a < 1 the ratio of the zonal
// damping to the eddy damping, b the rate at which the westerly displaces the eddies.
//
// Source: E. N. Lorenz (1984), "Irregularity: a fundamental property of the atmosphere",
// Tellus 36A, 98-110. Defaults a 0.25, b 4, F 8, G 1 (the chaotic case of that paper).
// Time unit: the damping time of the eddies (about 5 days in Lorenz's interpretation).
//
// With G = 0 the Hadley state (x, y, z) = (F, 0, 0) is a fixed point. The trace of the
// Jacobian (the phase-space divergence) is 2(x - 1) - a.
//
// Observables: the state variables x, y, z; no derived observables.
// Pure numerics: no allocation in rhs() or tangent(), no I/O.
#include <algorithm>
#include <cmath>
#include <memory>
#include <vector>

#include "models/fused_tangent.hpp"
#include "models/lorenz84_equations.hpp"
#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {
namespace {

/// Real-axis stability limit of classical RK4: |h lambda| <= 2.7853 for real lambda < 0.
constexpr double kRk4RealAxisLimit = 2.785;

class Lorenz84 final : public Model {
 public:
  explicit Lorenz84(const ParameterValues& v)
      : a_(scalar_parameter(v, "a")),
        b_(scalar_parameter(v, "b")),
        F_(scalar_parameter(v, "F")),
        G_(scalar_parameter(v, "G")) {}

  int state_dim() const override { return 3; }

  const std::vector<ObservableInfo>& observables() const override {
    static const std::vector<ObservableInfo> obs = {
        {"x", "strength of the westerly wind (zonal flow)"},
        {"y", "cosine phase of the large-scale eddies"},
        {"z", "sine phase of the large-scale eddies"}};
    return obs;
  }

  // x, dxdt: [3][width]; rows x, y, z. The arithmetic is Lorenz84Equations::rhs, shared with
  // the fused batch kernel.
  void rhs(const double* x, double* dxdt, int width) const override {
    const Lorenz84Equations e = equations();
#pragma GCC ivdep
    for (int m = 0; m < width; ++m) {
      const double s[3] = {x[m], x[width + m], x[2 * width + m]};
      double ds[3];
      e.rhs(s, ds);
      dxdt[m] = ds[0];
      dxdt[width + m] = ds[1];
      dxdt[2 * width + m] = ds[2];
    }
  }

  /// The equations at the current parameters (a scheduled one included).
  Lorenz84Equations equations() const {
    Lorenz84Equations e;
    e.a = a_;
    e.b = b_;
    e.F = F_;
    e.aF = a_ * F_;
    e.G = G_;
    return e;
  }

  bool has_tangent() const override { return true; }

  // out = J(x) v, Lorenz84Equations::tangent.
  void tangent(const double* x, const double* v, double* out, int width) const override {
    tangent_3(equations(), x, v, out, width);
  }

  bool fused_tangent_rk4_step(double* x, double* tangents, int vectors, double dt, int width,
                              double* scratch) const override {
    (void)scratch;
    return fused_tangent_rk4_step_3(equations(), x, tangents, vectors, dt, width);
  }

  // A rigorous (hence cautious) bound, not a sampled one. With E = |s|^2 / 2,
  //   dE/dt = -a x^2 + a F x - y^2 - z^2 + G y,
  // negative outside the ellipsoid a (x - F/2)^2 + (y - G/2)^2 + z^2 <= (a F^2 + G^2) / 4, so
  // the attractor lies in the ball |s| <= R around 0 that contains this ellipsoid:
  //   R = |F|/2 + |G|/2 + sqrt((a F^2 + G^2) / (4 min(a, 1))).
  // The spectral radius of the Jacobian is at most its Frobenius norm, evaluated with every
  // component at magnitude R; RK4 is kept inside |h lambda| <= 2.785. Defaults give about 0.03.
  double max_stable_dt() const override {
    const double a = std::abs(a_), b = std::abs(b_);
    const double amin = std::max(std::min(a, 1.0), 1e-300);
    const double R = std::abs(F_) / 2.0 + std::abs(G_) / 2.0 +
                     std::sqrt((a * F_ * F_ + G_ * G_) / (4.0 * amin));
    const double rows = a * a + 8.0 * R * R +                          // row x
                        (1.0 + b) * (1.0 + b) * R * R + (R + 1.0) * (R + 1.0) + b * b * R * R +
                        (1.0 + b) * (1.0 + b) * R * R + b * b * R * R + (R + 1.0) * (R + 1.0);
    return kRk4RealAxisLimit / std::sqrt(rows);
  }

  std::vector<double> default_initial_state() const override { return {1.0, 0.0, 0.0}; }

  // Slots 0..3: a, b, F, G, as Lorenz84Equations numbers them (rhs() builds its equations
  // from the members).
  int parameter_slot(const std::string& name) const override {
    return Lorenz84Equations::slot(name);
  }

  void set_parameter(int slot, double value) override {
    double* const fields[] = {&a_, &b_, &F_, &G_};
    if (slot < 0 || slot > 3) Model::set_parameter(slot, value);
    *fields[slot] = value;
  }

 private:
  double a_, b_, F_, G_;
};

ModelInfo lorenz84_info() {
  ModelInfo info;
  info.name = "lorenz84";
  info.description =
      "Lorenz (1984) general-circulation model, Tellus 36A, 98 (westerly x, eddies y, z)";
  info.parameters = {
      {"a", {0.25}, 0.0, 1e300, false, false, "zonal damping relative to eddy damping"},
      {"b", {4.0}, -1e300, 1e300, false, false, "displacement of the eddies by the westerly"},
      {"F", {8.0}, -1e300, 1e300, false, false, "symmetric thermal forcing"},
      {"G", {1.0}, -1e300, 1e300, false, false, "asymmetric (land-sea) thermal forcing"},
  };
  info.make = [](const ParameterValues& v) -> std::unique_ptr<Model> {
    return std::make_unique<Lorenz84>(v);
  };
  // a F in dx/dt and G in dy/dt
  info.additive_forcings = {
      {"F", [](const ParameterValues& v) {
         return std::vector<double>{scalar_parameter(v, "a"), 0.0, 0.0};
       }},
      {"G", [](const ParameterValues&) { return std::vector<double>{0.0, 1.0, 0.0}; }},
  };
  info.state_dim = [](const ParameterValues&) { return 3; };
  info.fast_kernel = FastKernel::circulation;
  return info;
}

const Registrar registrar(lorenz84_info());

}  // namespace
}  // namespace chaosweep::models
