// lorenz96-two-scale: the Lorenz (1996) two-level model, K slow variables X_k on a ring, each
// coupled to J fast variables Y_{j,k}; the K*J fast variables form one ring of their own.
//
//   dX_k/dt     = X_{k-1} (X_{k+1} - X_{k-2}) - X_k + F - (h c / b) sum_{j=0}^{J-1} Y_{j,k}
//   dY_{j,k}/dt = -c b Y_{j+1,k} (Y_{j+2,k} - Y_{j-1,k}) - c Y_{j,k} + (h c / b) X_k
//
// k = 0 .. K-1 cyclic. The fast index runs over the one ring of K*J variables,
// l = k J + j (cyclic mod K*J), so Y_{J,k} = Y_{0,k+1}: the neighbours of the last fast
// variable of sector k are the first ones of sector k+1.
//
// Source: E. N. Lorenz (1996), "Predictability: a problem partly solved", Proc. ECMWF Seminar
// on Predictability, vol. 1, 1-18 (section on the two-level model). Defaults K 36, J 10, F 10,
// h 1 (coupling), c 10 (time-scale ratio), b 10 (amplitude ratio), as in that paper.
//
// State order (state_dim = K + K*J): X_0 .. X_{K-1}, then the fast variables in ring order
// l = k J + j: Y_{0,0} .. Y_{J-1,0}, Y_{0,1} .. Y_{J-1,K-1}.
// Observables: x0 .. x{K-1} (the slow variables), y{k}_{j} (the fast variables, same order),
// then derived ones of the SLOW variables only:
//   site_mean = (1/K) sum_k X_k
//   energy    = sum_k X_k^2 / 2
// Pure numerics: no allocation in rhs(), tangent() or derived(), no I/O.
#include <algorithm>
#include <cmath>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "integrators/lanes.hpp"
#include "models/fused_tangent.hpp"
#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {
namespace {

constexpr double kRk4RealAxisLimit = 2.785;  // classical RK4: |h lambda| <= 2.785 on the real axis

class Lorenz96TwoScale final : public Model {
 public:
  explicit Lorenz96TwoScale(const ParameterValues& v)
      : K_(static_cast<int>(scalar_parameter(v, "K"))),
        J_(static_cast<int>(scalar_parameter(v, "J"))),
        F_(scalar_parameter(v, "F")),
        h_(scalar_parameter(v, "h")),
        c_(scalar_parameter(v, "c")),
        b_(scalar_parameter(v, "b")) {
    if (static_cast<double>(K_) != scalar_parameter(v, "K") || K_ < 4) {
      throw std::invalid_argument("lorenz96-two-scale needs an integer K >= 4.");
    }
    if (static_cast<double>(J_) != scalar_parameter(v, "J") || J_ < 1) {
      throw std::invalid_argument("lorenz96-two-scale needs an integer J >= 1.");
    }
    if (static_cast<long>(K_) * J_ < 4) {
      throw std::invalid_argument("lorenz96-two-scale needs at least 4 fast variables (K*J).");
    }
    if (b_ == 0.0) throw std::invalid_argument("lorenz96-two-scale needs b != 0.");
    for (int k = 0; k < K_; ++k) {
      observables_.push_back({"x" + std::to_string(k), "slow variable of sector " +
                                                           std::to_string(k)});
    }
    for (int k = 0; k < K_; ++k) {
      for (int j = 0; j < J_; ++j) {
        observables_.push_back({"y" + std::to_string(k) + "_" + std::to_string(j),
                                "fast variable " + std::to_string(j) + " of sector " +
                                    std::to_string(k)});
      }
    }
    observables_.push_back({"site_mean", "mean of the slow variables over the ring"});
    observables_.push_back({"energy", "energy of the slow variables, sum of x_k^2 / 2"});
  }

  int state_dim() const override { return K_ + K_ * J_; }
  const std::vector<ObservableInfo>& observables() const override { return observables_; }

  static constexpr int kBlock = 8;  // members side by side in the slow variables' sums

  void rhs(const double* s, double* ds, int width) const override {
    const int K = K_, J = J_, L = K_ * J_;
    const long w = width;
    const double coupling = h_ * c_ / b_, cb = c_ * b_, c = c_, F = F_;
    const double* X = s;
    const double* Y = s + K * w;
    double* dX = ds;
    double* dY = ds + K * w;
    for (int k = 0; k < K; ++k) {
      const int kp1 = k + 1 < K ? k + 1 : k + 1 - K;
      const int km1 = k >= 1 ? k - 1 : k - 1 + K;
      const int km2 = k >= 2 ? k - 2 : k - 2 + K;
      const double* xp1 = X + kp1 * w;
      const double* xm1 = X + km1 * w;
      const double* xm2 = X + km2 * w;
      const double* xk = X + k * w;
      double* out = dX + k * w;
      const double* y0 = Y + static_cast<long>(k) * J * w;
      // kBlock members at a time, the sum over the sector's fast variables kept in registers
      // (the same operations per member, in the same order, as one pass per fast variable)
      int m = 0;
      for (; m + kBlock <= width; m += kBlock) {
        double acc[kBlock];
        for (int i = 0; i < kBlock; ++i) {
          acc[i] = (xp1[m + i] - xm2[m + i]) * xm1[m + i] - xk[m + i] + F;
        }
        for (int j = 0; j < J; ++j) {
          const double* y = y0 + j * w + m;
          for (int i = 0; i < kBlock; ++i) acc[i] -= coupling * y[i];
        }
        for (int i = 0; i < kBlock; ++i) out[m + i] = acc[i];
      }
      for (; m < width; ++m) {
        double acc = (xp1[m] - xm2[m]) * xm1[m] - xk[m] + F;
        for (int j = 0; j < J; ++j) acc -= coupling * y0[j * w + m];
        out[m] = acc;
      }
    }
    for (int l = 0; l < L; ++l) {
      const int lp1 = l + 1 < L ? l + 1 : l + 1 - L;
      const int lp2 = l + 2 < L ? l + 2 : l + 2 - L;
      const int lm1 = l >= 1 ? l - 1 : l - 1 + L;
      const double* yp1 = Y + lp1 * w;
      const double* yp2 = Y + lp2 * w;
      const double* ym1 = Y + lm1 * w;
      const double* yl = Y + l * w;
      const double* xk = X + static_cast<long>(l / J) * w;
      double* out = dY + l * w;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) {
        out[m] = -cb * yp1[m] * (yp2[m] - ym1[m]) - c * yl[m] + coupling * xk[m];
      }
    }
  }

  std::size_t fused_rk4_scratch(int width) const override {
    (void)width;
    return 3 * static_cast<std::size_t>(state_dim()) * integrators::kLanes;
  }

  // The RK4 step one register of members (integrators::Lanes) at a time, each stage one sweep
  // over the sites with rhs()'s expressions: the slow sites with their sector's sum in a
  // register, then the fast ring with y_{l-1}, y_l, y_{l+1} carried from site to site. Stage
  // inputs and the running sum k1 + 2 k2 + 2 k3 stay in three rows per variable of kLanes
  // doubles (scratch), so a register's whole step stays in cache; Rk4Batch's operations per
  // member, in its order: x + (dt/2) k1, x + (dt/2) k2, x + dt k3 and
  // x + (dt/6) (((k1 + 2 k2) + 2 k3) + k4).
  bool fused_rk4_step(double* x, double dt, int width, double* scratch) const override {
    if (!fused_applies(width)) return false;
    const StageConstants p = constants();
    const StageConstants stages[4] = {p, p, p, p};
    fused_step(x, dt, width, scratch, stages);
    return true;
  }

  // The same with the parameters of each stage's time: read once per stage for the batch.
  bool fused_rk4_step_at(double* x, double dt, int width, double* scratch,
                         StageHook& hook) const override {
    if (!fused_applies(width)) return false;
    StageConstants stages[4];
    hook.before_stage(1);
    stages[0] = constants();
    hook.before_stage(2);
    stages[1] = stages[2] = constants();
    hook.before_stage(4);
    stages[3] = constants();
    fused_step(x, dt, width, scratch, stages);
    return true;
  }

 private:
  /// The parameters one stage's right-hand side uses, computed as rhs() computes them.
  struct StageConstants {
    double coupling, cb, c, F;
  };
  StageConstants constants() const { return {h_ * c_ / b_, c_ * b_, c_, F_}; }
  bool fused_applies(int width) const {
    return width % integrators::kLanes == 0 && K_ >= 3 && K_ * J_ >= 3;
  }

  /// The tendencies of input `in` (in(v): variable v's Lanes) at every variable with stage
  /// `p`'s parameters, handed to out(v, tendency), with rhs()'s expressions: the slow sites
  /// with their sector's sum in a register, then the fast ring with y_{l-1}, y_l, y_{l+1}
  /// carried from site to site.
  template <class In, class Out>
  void tendencies(const StageConstants& p, In in, Out out) const {
    using integrators::Lanes;
    const int K = K_, J = J_, NL = K_ * J_;
    const double coupling = p.coupling, cb = p.cb, c = p.c, F = p.F;
    for (int k = 0; k < K; ++k) {
      const int kp1 = k + 1 < K ? k + 1 : k + 1 - K;
      const int km1 = k >= 1 ? k - 1 : k - 1 + K;
      const int km2 = k >= 2 ? k - 2 : k - 2 + K;
      Lanes acc = (in(kp1) - in(km2)) * in(km1) - in(k) + F;
      for (int j = 0; j < J; ++j) acc -= coupling * in(K + k * J + j);
      out(k, acc);
    }
    Lanes ym1 = in(K + NL - 1), yl = in(K), yp1 = in(K + 1);
    int lp2 = 2, sector = 0, j = 0;
    for (int l = 0; l < NL; ++l) {
      const Lanes yp2 = in(K + lp2);
      out(K + l, -cb * yp1 * (yp2 - ym1) - c * yl + coupling * in(sector));
      ym1 = yl;
      yl = yp1;
      yp1 = yp2;
      lp2 = lp2 + 1 < NL ? lp2 + 1 : 0;
      if (++j == J) {
        j = 0;
        ++sector;
      }
    }
  }

  /// J(s) v at every variable (s(v), u(v): the state's and the vector's Lanes), handed to
  /// out(v, product), with tangent()'s expressions in its order of operations.
  template <class S, class V, class Out>
  void products(const StageConstants& p, S s, V u, Out out) const {
    using integrators::Lanes;
    const int K = K_, J = J_, NL = K_ * J_;
    const double coupling = p.coupling, cb = p.cb, c = p.c;
    for (int k = 0; k < K; ++k) {
      const int kp1 = k + 1 < K ? k + 1 : k + 1 - K;
      const int km1 = k >= 1 ? k - 1 : k - 1 + K;
      const int km2 = k >= 2 ? k - 2 : k - 2 + K;
      Lanes acc = (u(kp1) - u(km2)) * s(km1) + (s(kp1) - s(km2)) * u(km1) - u(k);
      for (int j = 0; j < J; ++j) acc -= coupling * u(K + k * J + j);
      out(k, acc);
    }
    for (int l = 0; l < NL; ++l) {
      const int lp1 = l + 1 < NL ? l + 1 : l + 1 - NL;
      const int lp2 = l + 2 < NL ? l + 2 : l + 2 - NL;
      const int lm1 = l >= 1 ? l - 1 : l - 1 + NL;
      out(K + l, -cb * (u(K + lp1) * (s(K + lp2) - s(K + lm1)) +
                        s(K + lp1) * (u(K + lp2) - u(K + lm1))) -
                     c * u(K + l) + coupling * u(l / J));
    }
  }

  void fused_step(double* x, double dt, int width, double* scratch,
                  const StageConstants (&stages)[4]) const {
    using integrators::Lanes;
    using integrators::load_lanes;
    using integrators::store_lanes;
    constexpr int kL = integrators::kLanes;
    const int K = K_, NL = K_ * J_, D = K + NL;
    const long w = width;
    const double half = 0.5 * dt, sixth = dt / 6.0;
    double* const A = scratch;               // [D][kL] stage input
    double* const B = scratch + D * kL;      // [D][kL] stage input
    double* const T = scratch + 2 * D * kL;  // [D][kL] k1 + 2 k2 (+ 2 k3)
    auto row = [kL](double* p, int v) { return p + static_cast<long>(v) * kL; };
    for (long m0 = 0; m0 < w; m0 += kL) {
      double* const xm = x + m0;
      auto state = [xm, w](int v) { return load_lanes(xm + v * w); };
      auto sweep = [this](const StageConstants& p, auto in, auto out) { tendencies(p, in, out); };
      auto from = [&](double* p) { return [p, &row](int v) { return load_lanes(row(p, v)); }; };
      sweep(stages[0], state, [&](int v, Lanes k1) {
        store_lanes(row(T, v), k1);
        store_lanes(row(A, v), state(v) + half * k1);
      });
      sweep(stages[1], from(A), [&](int v, Lanes k2) {
        store_lanes(row(T, v), load_lanes(row(T, v)) + 2.0 * k2);
        store_lanes(row(B, v), state(v) + half * k2);
      });
      sweep(stages[2], from(B), [&](int v, Lanes k3) {
        store_lanes(row(T, v), load_lanes(row(T, v)) + 2.0 * k3);
        store_lanes(row(A, v), state(v) + dt * k3);
      });
      sweep(stages[3], from(A), [&](int v, Lanes k4) {
        store_lanes(xm + v * w, state(v) + sixth * (load_lanes(row(T, v)) + k4));
      });
    }
  }

 public:
  std::size_t fused_tangent_rk4_scratch(int width) const override {
    (void)width;
    return fused_tangent_rows_scratch(state_dim());
  }

  // The state and its tangent vectors one register of members at a time, each stage one
  // sweep over the sites (tendencies(), products(); models/fused_tangent.hpp).
  bool fused_tangent_rk4_step(double* x, double* tangents, int vectors, double dt, int width,
                              double* scratch) const override {
    constexpr int kL = integrators::kLanes;
    if (!fused_applies(width)) return false;
    const StageConstants p = constants();
    auto row = [](const double* q) {
      return [q](int v) { return integrators::load_lanes(q + static_cast<long>(v) * kL); };
    };
    fused_tangent_rows(
        state_dim(), x, tangents, vectors, dt, width, scratch,
        [&](const double* in, auto out) { tendencies(p, row(in), out); },
        [&](const double* s, const double* in, auto out) { products(p, row(s), row(in), out); });
    return true;
  }

  bool has_tangent() const override { return true; }

  // out = J(s) v, the equations above linearised; (u, w) are the slow and fast parts of v:
  //   out_X_k = (u_{k+1} - u_{k-2}) X_{k-1} + (X_{k+1} - X_{k-2}) u_{k-1} - u_k
  //             - (h c / b) sum_j w_{j,k}
  //   out_Y_l = -c b [w_{l+1} (Y_{l+2} - Y_{l-1}) + Y_{l+1} (w_{l+2} - w_{l-1})] - c w_l
  //             + (h c / b) u_{l / J}
  void tangent(const double* s, const double* v, double* out, int width) const override {
    const int K = K_, J = J_, L = K_ * J_;
    const long w = width;
    const double coupling = h_ * c_ / b_, cb = c_ * b_, c = c_;
    const double* X = s;
    const double* Y = s + K * w;
    const double* U = v;
    const double* W = v + K * w;
    double* oX = out;
    double* oY = out + K * w;
    for (int k = 0; k < K; ++k) {
      const int kp1 = k + 1 < K ? k + 1 : k + 1 - K;
      const int km1 = k >= 1 ? k - 1 : k - 1 + K;
      const int km2 = k >= 2 ? k - 2 : k - 2 + K;
      const double *xp1 = X + kp1 * w, *xm1 = X + km1 * w, *xm2 = X + km2 * w;
      const double *up1 = U + kp1 * w, *um1 = U + km1 * w, *um2 = U + km2 * w, *uk = U + k * w;
      double* o = oX + k * w;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) {
        o[m] = (up1[m] - um2[m]) * xm1[m] + (xp1[m] - xm2[m]) * um1[m] - uk[m];
      }
      for (int j = 0; j < J; ++j) {
        const double* wl = W + (static_cast<long>(k) * J + j) * w;
#pragma GCC ivdep
        for (int m = 0; m < width; ++m) o[m] -= coupling * wl[m];
      }
    }
    for (int l = 0; l < L; ++l) {
      const int lp1 = l + 1 < L ? l + 1 : l + 1 - L;
      const int lp2 = l + 2 < L ? l + 2 : l + 2 - L;
      const int lm1 = l >= 1 ? l - 1 : l - 1 + L;
      const double *yp1 = Y + lp1 * w, *yp2 = Y + lp2 * w, *ym1 = Y + lm1 * w;
      const double *wp1 = W + lp1 * w, *wp2 = W + lp2 * w, *wm1 = W + lm1 * w, *wl = W + l * w;
      const double* uk = U + static_cast<long>(l / J) * w;
      double* o = oY + l * w;
#pragma GCC ivdep
      for (int m = 0; m < width; ++m) {
        o[m] = -cb * (wp1[m] * (yp2[m] - ym1[m]) + yp1[m] * (wp2[m] - wm1[m])) - c * wl[m] +
               coupling * uk[m];
      }
    }
  }

  // out: [2][width]: row 0 site_mean, row 1 the energy of the slow variables (k in order).
  void derived(const double* s, double* out, int width) const override {
    double* mean = out;
    double* energy = out + width;
    for (int m = 0; m < width; ++m) mean[m] = energy[m] = 0.0;
    for (int k = 0; k < K_; ++k) {
      const double* xk = s + static_cast<long>(k) * width;
      for (int m = 0; m < width; ++m) {
        mean[m] += xk[m];
        energy[m] += xk[m] * xk[m];
      }
    }
    for (int m = 0; m < width; ++m) {
      mean[m] /= static_cast<double>(K_);
      energy[m] *= 0.5;
    }
  }

  // Estimate, not sampled along trajectories: the slow ring is bounded as for the one-level
  // model, spectral radius about 1 + 2|F| at X_k = F. For frozen X_k = F the fast ring has
  // the uniform steady state Y = h F / b, where its circulant Jacobian has eigenvalues of
  // modulus at most c (1 + 2 b |Y|) = c (1 + 2 |h F|). The larger of the two, with the margin
  // 1.25 the one-level model uses, bounds the step. Defaults give about 0.0106.
  double max_stable_dt() const override {
    const double slow = 1.0 + 2.0 * std::abs(F_);
    const double fast = std::abs(c_) * (1.0 + 2.0 * std::abs(h_ * F_));
    return kRk4RealAxisLimit / (1.25 * std::max(slow, fast));
  }

  // X_k = F with a small bump at X_0; the fast variables start at small distinct values
  // (0.01 (l mod 7) - 0.03), so the fast ring is not in its unstable uniform state.
  std::vector<double> default_initial_state() const override {
    std::vector<double> s(static_cast<std::size_t>(state_dim()), 0.0);
    for (int k = 0; k < K_; ++k) s[k] = F_;
    s[0] += 0.01;
    for (int l = 0; l < K_ * J_; ++l) s[K_ + l] = 0.01 * (l % 7) - 0.03;
    return s;
  }

  // Slots 0..3: F, h, c, b (K and J are structural; rhs() reads the members directly).
  int parameter_slot(const std::string& name) const override {
    static const char* const names[] = {"F", "h", "c", "b"};
    for (int i = 0; i < 4; ++i) {
      if (name == names[i]) return i;
    }
    return -1;
  }

  void set_parameter(int slot, double value) override {
    double* const fields[] = {&F_, &h_, &c_, &b_};
    if (slot < 0 || slot > 3) Model::set_parameter(slot, value);
    *fields[slot] = value;
  }

 private:
  int K_, J_;
  double F_, h_, c_, b_;
  std::vector<ObservableInfo> observables_;
};

ModelInfo lorenz96_two_scale_info() {
  ModelInfo info;
  info.name = "lorenz96-two-scale";
  info.description =
      "Lorenz (1996) two-level ring model (slow X, fast Y), ECMWF seminar on predictability";
  info.parameters = {
      {"K", {36.0}, 4.0, 1e5, true, true, "number of slow variables (sectors)"},
      {"J", {10.0}, 1.0, 1e3, true, true, "fast variables per slow variable"},
      {"F", {10.0}, -1e300, 1e300, false, false, "constant forcing of the slow variables"},
      {"h", {1.0}, -1e300, 1e300, false, false, "coupling strength"},
      {"c", {10.0}, 0.0, 1e300, false, false, "time-scale ratio (fast/slow)"},
      {"b", {10.0}, 1e-300, 1e300, false, false, "amplitude ratio (slow/fast)"},
  };
  info.make = [](const ParameterValues& v) -> std::unique_ptr<Model> {
    return std::make_unique<Lorenz96TwoScale>(v);
  };
  info.state_dim = [](const ParameterValues& v) {
    const long K = static_cast<long>(scalar_parameter(v, "K"));
    const long J = static_cast<long>(scalar_parameter(v, "J"));
    return static_cast<int>(K + K * J);
  };
  // + F on the slow variables (the first K), none on the fast ones
  info.additive_forcings = {{"F", [](const ParameterValues& v) {
                               const auto K = static_cast<std::size_t>(scalar_parameter(v, "K"));
                               const auto J = static_cast<std::size_t>(scalar_parameter(v, "J"));
                               std::vector<double> e(K + K * J, 0.0);
                               std::fill(e.begin(), e.begin() + static_cast<long>(K), 1.0);
                               return e;
                             }}};
  return info;
}

const Registrar registrar(lorenz96_two_scale_info());

}  // namespace
}  // namespace chaosweep::models
