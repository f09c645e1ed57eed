// The fused tangent RK4 steps (Model::fused_tangent_rk4_step): the state and its tangent
// vectors one register of members (integrators::Lanes) at a time, with
// integrators::TangentRk4Batch's operations per member in its order (stage inputs
// x + (dt/2) k, x + dt k3; updates x + (dt/6) (k1 + 2 k2 + 2 k3 + k4)). The tangent products
// pass through integrators::opaque: the generic stepper stores them, so a product that ends
// one (sigma (v_y - v_x) of the convection loop) is never fused into the next sum. For
// three-variable models everything stays in registers; for the rings the stages go through
// rows of a register per variable that stay in cache. Pure numerics.
#pragma once

#include <cstddef>

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

/// Model::tangent for a three-variable model: out = J(x) v over a batch ([3][width] each)
/// by the equations' tangent(), member by member.
template <class Equations>
void tangent_3(const Equations& equations, const double* x, const double* v, double* out,
               int width) {
  const Equations e = equations;  // a local copy: out cannot alias its parameters
  const double* x0 = x;
  const double* x1 = x + width;
  const double* x2 = x + 2 * width;
  const double* v0 = v;
  const double* v1 = v + width;
  const double* v2 = v + 2 * width;
#pragma GCC ivdep
  for (int m = 0; m < width; ++m) {
    const double s[3] = {x0[m], x1[m], x2[m]};
    const double d[3] = {v0[m], v1[m], v2[m]};
    double o[3];
    e.tangent(s, d, o);
    out[m] = o[0];
    out[width + m] = o[1];
    out[2 * width + m] = o[2];
  }
}

/// Doubles of scratch fused_tangent_rows() needs for a model of `dim` variables.
inline std::size_t fused_tangent_rows_scratch(int dim) {
  return 9 * static_cast<std::size_t>(dim) * integrators::kLanes;
}

/// The fused tangent step of a model of `dim` variables over rows of a register per variable
/// (scratch: the start X, the state's stage inputs S2 .. S4 and running sum T of
/// k1 + 2 k2 + 2 k3; a vector V, its stage inputs A and B and running sum D). The model gives
/// tendencies(in, out), its right-hand side at the state whose variable v is the register at
/// in + v * kLanes, handed to out(v, tendency), and products(s, in, out), J(s) in likewise.
/// width must be a multiple of integrators::kLanes.
template <class Tendencies, class Products>
void fused_tangent_rows(int dim, double* x, double* tangents, int vectors, double dt, int width,
                        double* scratch, Tendencies tendencies, Products products) {
  using integrators::Lanes;
  using integrators::load_lanes;
  using integrators::store_lanes;
  constexpr int kL = integrators::kLanes;
  const long w = width, size = static_cast<long>(dim) * w, rows = static_cast<long>(dim) * kL;
  const double half = 0.5 * dt, sixth = dt / 6.0;
  double* const X = scratch;
  double* const S2 = X + rows;
  double* const S3 = S2 + rows;
  double* const S4 = S3 + rows;
  double* const T = S4 + rows;
  double* const V = T + rows;
  double* const A = V + rows;
  double* const B = A + rows;
  double* const D = B + rows;
  auto at = [](const double* p, int v) { return load_lanes(p + static_cast<long>(v) * kL); };
  auto put = [](double* p, int v, Lanes value) { store_lanes(p + static_cast<long>(v) * kL, value); };
  auto product = [&products](const double* s, const double* in, auto out) {
    products(s, in, [&out](int v, Lanes d) { out(v, integrators::opaque(d)); });
  };
  for (long m0 = 0; m0 < w; m0 += kL) {
    for (int v = 0; v < dim; ++v) put(X, v, load_lanes(x + v * w + m0));
    tendencies(X, [&](int v, Lanes k1) {
      put(T, v, k1);
      put(S2, v, at(X, v) + half * k1);
    });
    tendencies(S2, [&](int v, Lanes k2) {
      put(T, v, at(T, v) + 2.0 * k2);
      put(S3, v, at(X, v) + half * k2);
    });
    tendencies(S3, [&](int v, Lanes k3) {
      put(T, v, at(T, v) + 2.0 * k3);
      put(S4, v, at(X, v) + dt * k3);
    });
    tendencies(S4, [&](int v, Lanes k4) {
      Lanes next = at(X, v);
      next += sixth * (at(T, v) + k4);
      store_lanes(x + v * w + m0, next);
    });
    for (int j = 0; j < vectors; ++j) {
      double* const vm = tangents + j * size + m0;
      for (int v = 0; v < dim; ++v) put(V, v, load_lanes(vm + v * w));
      product(X, V, [&](int v, Lanes d1) {
        put(D, v, d1);
        put(A, v, at(V, v) + half * d1);
      });
      product(S2, A, [&](int v, Lanes d2) {
        put(D, v, at(D, v) + 2.0 * d2);
        put(B, v, at(V, v) + half * d2);
      });
      product(S3, B, [&](int v, Lanes d3) {
        put(D, v, at(D, v) + 2.0 * d3);
        put(A, v, at(V, v) + dt * d3);
      });
      product(S4, A, [&](int v, Lanes d4) {
        Lanes next = at(V, v);
        next += sixth * (at(D, v) + d4);
        store_lanes(vm + v * w, next);
      });
    }
  }
}

}  // namespace chaosweep::models
