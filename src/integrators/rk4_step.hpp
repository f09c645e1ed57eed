// Classical RK4 steps written once for one member's value type T (double or Lanes) and a
// model's equations, inlined into the fused batch kernels. The operations and their order
// are those of Rk4Batch::step and Rk4Reference::step (rk4.cpp):
//   k1 = f(x), k2 = f(x + dt/2 k1), k3 = f(x + dt/2 k2), k4 = f(x + dt k3),
//   x <- x + dt/6 (((k1 + 2 k2) + 2 k3) + k4),
// so every path gives bitwise the same state. Pure numerics: header only, no allocation.
#pragma once

#include "integrators/lanes.hpp"

namespace chaosweep::integrators {

/// The step sizes RK4 uses, computed once per run as Rk4Batch does.
struct Rk4Steps {
  double dt, half, sixth;
  explicit Rk4Steps(double step) : dt(step), half(0.5 * step), sixth(step / 6.0) {}
};

/// One RK4 step of x[D] in place for equations with `void rhs(const T (&)[D], T (&)[D])`:
/// stage 1 with e1, stages 2 and 3 with e23, stage 4 with e4 (a parameter that changes in
/// time, evaluated at the stage times).
template <int D, typename Equations, typename T>
inline void rk4_step(const Equations& e1, const Equations& e23, const Equations& e4,
                     const Rk4Steps& h, T (&x)[D]) {
  T k1[D], k2[D], k3[D], k4[D], s[D];
  e1.rhs(x, k1);
  for (int i = 0; i < D; ++i) s[i] = x[i] + h.half * k1[i];
  e23.rhs(s, k2);
  for (int i = 0; i < D; ++i) s[i] = x[i] + h.half * k2[i];
  e23.rhs(s, k3);
  for (int i = 0; i < D; ++i) s[i] = x[i] + h.dt * k3[i];
  e4.rhs(s, k4);
  for (int i = 0; i < D; ++i) x[i] += h.sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
}

/// The same with constant equations.
template <int D, typename Equations, typename T>
inline void rk4_step(const Equations& eq, const Rk4Steps& h, T (&x)[D]) {
  rk4_step<D>(eq, eq, eq, h, x);
}

}  // namespace chaosweep::integrators
