// The fused tangent RK4 step of a three-variable model whose equations type has rhs() and
// tangent() templated on the value type (Lorenz63Equations, Lorenz84Equations): the state and
// its tangent vectors one register of members (integrators::Lanes) at a time, the four stage
// states and the state's step in registers, then each vector's four tangent products at those
// stages, with integrators::TangentRk4Batch's operations per member in its order (stage inputs
// x + (dt/2) k, x + dt k3; updates x + (dt/6) (k1 + 2 k2 + 2 k3 + k4)). The products pass
// through integrators::opaque: the generic stepper stores them, so a product that ends one
// (sigma (v_y - v_x) of the convection loop) is never fused into the next sum. Pure numerics.
#pragma once

#include "integrators/lanes.hpp"

namespace chaosweep::models {

/// Model::fused_tangent_rk4_step for equations `e`: false when width is not a multiple of
/// integrators::kLanes.
template <class Equations>
bool fused_tangent_rk4_step_3(const Equations& e, double* x, double* tangents, int vectors,
                              double dt, int width) {
  static_assert(Equations::kDim == 3, "a three-variable model");
  using integrators::Lanes;
  using integrators::load_lanes;
  using integrators::store_lanes;
  constexpr int kL = integrators::kLanes;
  if (width % kL != 0) return false;
  const long w = width, n = 3 * w;
  const double half = 0.5 * dt, sixth = dt / 6.0;
  for (long m0 = 0; m0 < w; m0 += kL) {
    double* const xm = x + m0;
    const Lanes x0[3] = {load_lanes(xm), load_lanes(xm + w), load_lanes(xm + 2 * w)};
    Lanes s2[3], s3[3], s4[3], k1[3], k2[3], k3[3], k4[3];
    e.rhs(x0, k1);
    for (int i = 0; i < 3; ++i) s2[i] = x0[i] + half * k1[i];
    e.rhs(s2, k2);
    for (int i = 0; i < 3; ++i) s3[i] = x0[i] + half * k2[i];
    e.rhs(s3, k3);
    for (int i = 0; i < 3; ++i) s4[i] = x0[i] + dt * k3[i];
    e.rhs(s4, k4);
    for (int i = 0; i < 3; ++i) {
      Lanes next = x0[i];
      next += sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
      store_lanes(xm + i * w, next);
    }
    auto product = [&e](const Lanes(&at)[3], const Lanes(&by)[3], Lanes(&out)[3]) {
      e.tangent(at, by, out);
      for (int i = 0; i < 3; ++i) out[i] = integrators::opaque(out[i]);
    };
    for (int j = 0; j < vectors; ++j) {
      double* const vm = tangents + j * n + m0;
      Lanes v[3] = {load_lanes(vm), load_lanes(vm + w), load_lanes(vm + 2 * w)};
      Lanes d1[3], d2[3], d3[3], d4[3], in[3];
      product(x0, v, d1);
      for (int i = 0; i < 3; ++i) in[i] = v[i] + half * d1[i];
      product(s2, in, d2);
      for (int i = 0; i < 3; ++i) in[i] = v[i] + half * d2[i];
      product(s3, in, d3);
      for (int i = 0; i < 3; ++i) in[i] = v[i] + dt * d3[i];
      product(s4, in, d4);
      for (int i = 0; i < 3; ++i) {
        v[i] += sixth * (d1[i] + 2.0 * d2[i] + 2.0 * d3[i] + d4[i]);
        store_lanes(vm + i * w, v[i]);
      }
    }
  }
  return true;
}

}  // namespace chaosweep::models
