// Classical RK4 (Kutta 1901; e.g. Hairer, Norsett & Wanner 1993, Solving ODEs I, II.1):
//
//   k1 = f(x)
//   k2 = f(x + dt/2 k1)
//   k3 = f(x + dt/2 k2)
//   k4 = f(x + dt k3)
//   x <- x + dt/6 (k1 + 2 k2 + 2 k3 + k4)
//
// Every loop runs over the flat [state_dim][width] array, so each member (column) sees the
// same sequence of floating-point operations whatever its column and whatever its neighbours.
// rk4_scalar_reference (reference.cpp) performs the identical operations for one member.
#include "integrators/rk4.hpp"

#include <stdexcept>

namespace chaosweep::integrators {

Rk4Batch::Rk4Batch(const models::Model& model, int width)
    : model_(model), width_(width), size_(static_cast<long>(model.state_dim()) * width) {
  if (width < 1) throw std::invalid_argument("RK4 batch width must be at least 1.");
  for (auto* buffer : {&k1_, &k2_, &k3_, &k4_, &stage_}) buffer->assign(size_, 0.0);
  fused_.assign(model.fused_rk4_scratch(width), 0.0);
}

template <class Before>
void Rk4Batch::advance(double* x, double dt, Before before) {
  const long n = size_;
  const double half = 0.5 * dt;
  const double sixth = dt / 6.0;
  double* __restrict k1 = k1_.data();
  double* __restrict k2 = k2_.data();
  double* __restrict k3 = k3_.data();
  double* __restrict k4 = k4_.data();
  double* __restrict s = stage_.data();

  before(1);
  model_.rhs(x, k1, width_);
  for (long i = 0; i < n; ++i) s[i] = x[i] + half * k1[i];
  before(2);
  model_.rhs(s, k2, width_);
  for (long i = 0; i < n; ++i) s[i] = x[i] + half * k2[i];
  model_.rhs(s, k3, width_);
  for (long i = 0; i < n; ++i) s[i] = x[i] + dt * k3[i];
  before(4);
  model_.rhs(s, k4, width_);
  for (long i = 0; i < n; ++i) x[i] += sixth * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
}

void Rk4Batch::step(double* x, double dt) {
  if (!fused_.empty() && model_.fused_rk4_step(x, dt, width_, fused_.data())) return;
  advance(x, dt, [](int) {});
}

void Rk4Batch::step_at(double* x, double dt, double t0, double t1, StageClock& clock) {
  if (!fused_.empty()) {  // the model's fused step, told each stage's time the same way
    struct Hook final : models::Model::StageHook {
      StageClock& clock;
      double t0, t1, dt;
      Hook(StageClock& c, double a, double b, double h) : clock(c), t0(a), t1(b), dt(h) {}
      void before_stage(int stage) override { clock.set_time(stage_time(stage, t0, t1, dt)); }
    } hook(clock, t0, t1, dt);
    if (model_.fused_rk4_step_at(x, dt, width_, fused_.data(), hook)) return;
  }
  advance(x, dt, [&](int stage) { clock.set_time(stage_time(stage, t0, t1, dt)); });
}

}  // namespace chaosweep::integrators
