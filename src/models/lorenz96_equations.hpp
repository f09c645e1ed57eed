// The Lorenz (1996) ring equation for one site, written once for every caller: the model's
// batched rhs() (lorenz96.cpp) and the fused ring kernel (run/) evaluate exactly this code,
// so the two paths agree bit for bit. Pure numerics.
//
//   dx_k/dt = (x_{k+1} - x_{k-2}) x_{k-1} - x_k + F,   k = 0 .. n-1, indices mod n
//
// E. N. Lorenz (1996), Proc. ECMWF Seminar on Predictability, vol. 1, 1-18.
#pragma once

#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {

struct Lorenz96Equations {
  int n = 40;         // sites on the ring
  double F = 8.0;     // forcing

  /// From complete parameter values (n, F).
  static Lorenz96Equations from(const ParameterValues& v) {
    Lorenz96Equations e;
    e.n = static_cast<int>(scalar_parameter(v, "n"));
    e.F = scalar_parameter(v, "F");
    return e;
  }

  /// The tendency of site k from its neighbours x_{k-2}, x_{k-1}, x_k, x_{k+1}; T is double or
  /// a vector of members' values.
  template <typename T>
  T site(T xm2, T xm1, T x0, T xp1) const {
    return (xp1 - xm2) * xm1 - x0 + F;
  }

  /// Site k of J(x) v, the linearised tendency, from the neighbours of x and v:
  /// (v_{k+1} - v_{k-2}) x_{k-1} + (x_{k+1} - x_{k-2}) v_{k-1} - v_k.
  template <typename T>
  static T site_tangent(T xm2, T xm1, T xp1, T vm2, T vm1, T v0, T vp1) {
    return (vp1 - vm2) * xm1 + (xp1 - xm2) * vm1 - v0;
  }

  /// The derived observables site_mean = (1/n) sum_k x_k and energy = sum_k x_k^2 / 2: sums over
  /// the sites in order 0..n-1 from 0.0 with add_site(), then mean() and energy().
  template <typename T>
  static void add_site(T x, T& sum, T& squares) {
    sum += x;
    squares += x * x;
  }
  template <typename T>
  T mean(T sum) const {
    return sum / static_cast<double>(n);
  }
  template <typename T>
  static T energy(T squares) {
    return squares * 0.5;
  }
};

}  // namespace chaosweep::models
