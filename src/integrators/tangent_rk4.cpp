// The tangent of the discrete RK4 map (see tangent_rk4.hpp). The state's step is that of
// rk4.cpp:
//
//   s1 = x, k1 = f(s1); s2 = x + dt/2 k1, k2 = f(s2); s3 = x + dt/2 k2, k3 = f(s3);
//   s4 = x + dt k3, k4 = f(s4); x <- x + dt/6 (k1 + 2 k2 + 2 k3 + k4),
//
// and each tangent vector v follows its derivative with respect to x (chain rule through the
// stages, J the Jacobian of f at the stage states kept from the state's step):
//
//   dk1 = J(s1) v, dk2 = J(s2)(v + dt/2 dk1), dk3 = J(s3)(v + dt/2 dk2), dk4 = J(s4)(v + dt dk3),
//   v <- v + dt/6 (dk1 + 2 dk2 + 2 dk3 + dk4),
//
// so v becomes exactly D Phi(x) v, the linearisation of the map that moves the state. Every
// loop runs over the flat [state_dim][width] array, so each member (column) sees the same
// sequence of floating-point operations whatever its column and whatever its neighbours.
#include "integrators/tangent_rk4.hpp"

#include <algorithm>
#include <stdexcept>

namespace chaosweep::integrators {

TangentRk4Batch::TangentRk4Batch(const models::Model& model, int width, int vectors)
    : model_(model), width_(width), vectors_(vectors),
      size_(static_cast<long>(model.state_dim()) * width) {
  if (!model.has_tangent()) {
    throw std::invalid_argument("tangent RK4: the model has no tangent-linear product");
  }
  if (width < 1) throw std::invalid_argument("tangent RK4: batch width must be at least 1");
  if (vectors < 0) throw std::invalid_argument("tangent RK4: vectors must be >= 0");
  for (auto* buffer : {&stage_, &slope_, &dk_}) buffer->assign(4 * size_, 0.0);
  w_.assign(size_, 0.0);
  fused_.assign(model.fused_tangent_rk4_scratch(width), 0.0);
}

template <class Before>
void TangentRk4Batch::advance(double* x, double* tangents, double dt, Before before) {
  const long n = size_;
  const double half = 0.5 * dt;
  const double sixth = dt / 6.0;
  double* s1 = stage_.data();
  double* s2 = s1 + n;
  double* s3 = s2 + n;
  double* s4 = s3 + n;
  double* k1 = slope_.data();
  double* k2 = k1 + n;
  double* k3 = k2 + n;
  double* k4 = k3 + n;
  std::copy(x, x + n, s1);
  before(1);
  model_.rhs(s1, k1, width_);
  for (long i = 0; i < n; ++i) s2[i] = x[i] + half * k1[i];
  before(2);
  model_.rhs(s2, k2, width_);
  for (long i = 0; i < n; ++i) s3[i] = x[i] + half * k2[i];
  model_.rhs(s3, k3, width_);
  for (long i = 0; i < n; ++i) s4[i] = x[i] + dt * k3[i];
  before(4);
  model_.rhs(s4, k4, width_);
  for (long i = 0; i < n; ++i) x[i] += sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);

  double* d1 = dk_.data();
  double* d2 = d1 + n;
  double* d3 = d2 + n;
  double* d4 = d3 + n;
  double* w = w_.data();
  for (int j = 0; j < vectors_; ++j) {
    double* v = tangents + j * n;
    before(1);
    model_.tangent(s1, v, d1, width_);
    for (long i = 0; i < n; ++i) w[i] = v[i] + half * d1[i];
    before(2);
    model_.tangent(s2, w, d2, width_);
    for (long i = 0; i < n; ++i) w[i] = v[i] + half * d2[i];
    model_.tangent(s3, w, d3, width_);
    for (long i = 0; i < n; ++i) w[i] = v[i] + dt * d3[i];
    before(4);
    model_.tangent(s4, w, d4, width_);
    for (long i = 0; i < n; ++i) v[i] += sixth * (d1[i] + 2.0 * d2[i] + 2.0 * d3[i] + d4[i]);
  }
}

void TangentRk4Batch::step(double* x, double* tangents, double dt) {
  if (model_.fused_tangent_rk4_step(x, tangents, vectors_, dt, width_, fused_.data())) return;
  advance(x, tangents, dt, [](int) {});
}

void TangentRk4Batch::step_at(double* x, double* tangents, double dt, double t0, double t1,
                              Rk4Batch::StageClock& clock) {
  advance(x, tangents, dt,
          [&](int stage) { clock.set_time(Rk4Batch::stage_time(stage, t0, t1, dt)); });
}

}  // namespace chaosweep::integrators
