// Scalar RK4, one member on plain arrays (update formula as in rk4.cpp):
//   x <- x + dt/6 (k1 + 2 k2 + 2 k3 + k4),  k1 = f(x), k2 = f(x + dt/2 k1),
//   k3 = f(x + dt/2 k2), k4 = f(x + dt k3).
#include "integrators/reference.hpp"

#include <vector>

namespace chaosweep::integrators {

void rk4_scalar_reference(const models::Model& model, double* x, double dt, std::int64_t steps) {
  const int d = model.state_dim();
  std::vector<double> k1(d), k2(d), k3(d), k4(d), s(d);
  const double half = 0.5 * dt;
  const double sixth = dt / 6.0;
  for (std::int64_t step = 0; step < steps; ++step) {
    model.rhs(x, k1.data(), 1);
    for (int i = 0; i < d; ++i) s[i] = x[i] + half * k1[i];
    model.rhs(s.data(), k2.data(), 1);
    for (int i = 0; i < d; ++i) s[i] = x[i] + half * k2[i];
    model.rhs(s.data(), k3.data(), 1);
    for (int i = 0; i < d; ++i) s[i] = x[i] + dt * k3[i];
    model.rhs(s.data(), k4.data(), 1);
    for (int i = 0; i < d; ++i) x[i] += sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
  }
}

}  // namespace chaosweep::integrators
