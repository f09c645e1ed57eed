// Scalar RK4, one member on plain arrays (update formula as in rk4.cpp):
//   x <- x + dt/6 (k1 + 2 k2 + 2 k3 + k4),  k1 = f(x), k2 = f(x + dt/2 k1),
//   k3 = f(x + dt/2 k2), k4 = f(x + dt k3).
#include "integrators/reference.hpp"

namespace chaosweep::integrators {

Rk4Reference::Rk4Reference(const models::Model& model)
    : model_(model),
      dim_(model.state_dim()),
      k1_(dim_),
      k2_(dim_),
      k3_(dim_),
      k4_(dim_),
      stage_(dim_) {}

void Rk4Reference::step(double* x, double dt) {
  const int d = dim_;
  double* k1 = k1_.data();
  double* k2 = k2_.data();
  double* k3 = k3_.data();
  double* k4 = k4_.data();
  double* s = stage_.data();
  const double half = 0.5 * dt;
  const double sixth = dt / 6.0;
  model_.rhs(x, k1, 1);
  for (int i = 0; i < d; ++i) s[i] = x[i] + half * k1[i];
  model_.rhs(s, k2, 1);
  for (int i = 0; i < d; ++i) s[i] = x[i] + half * k2[i];
  model_.rhs(s, k3, 1);
  for (int i = 0; i < d; ++i) s[i] = x[i] + dt * k3[i];
  model_.rhs(s, k4, 1);
  for (int i = 0; i < d; ++i) x[i] += sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
}

void rk4_scalar_reference(const models::Model& model, double* x, double dt, std::int64_t steps) {
  Rk4Reference reference(model);
  for (std::int64_t step = 0; step < steps; ++step) reference.step(x, dt);
}

}  // namespace chaosweep::integrators
