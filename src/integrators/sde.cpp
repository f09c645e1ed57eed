// Euler-Maruyama and stochastic Heun over a batch (see sde.hpp). As in the RK4 stepper,
// every loop runs over whole rows, so a member's arithmetic does not depend on its column.
#include "integrators/sde.hpp"

#include <algorithm>
#include <stdexcept>
#include <utility>

namespace chaosweep::integrators {

SdeBatch::SdeBatch(const models::Model& model, int width, SdeMethod method, NoiseForm form,
                   std::vector<int> variables)
    : model_(model),
      width_(width),
      size_(static_cast<long>(model.state_dim()) * width),
      method_(method),
      form_(form),
      variables_(std::move(variables)) {
  if (width < 1) throw std::invalid_argument("SDE batch width must be at least 1.");
  for (const int v : variables_) {
    if (v < 0 || v >= model.state_dim())
      throw std::invalid_argument("A noisy variable is outside the model's state.");
  }
  for (auto* buffer : {&f0_, &f1_, &predictor_}) buffer->assign(size_, 0.0);
}

void SdeBatch::add_noise(const double* x, double amplitude, const double* dw, double scale,
                         double* out) const {
  const int w = width_;
  const double a = scale * amplitude;
  for (std::size_t r = 0; r < variables_.size(); ++r) {
    const long row = static_cast<long>(variables_[r]) * w;
    const double* __restrict d = dw + static_cast<long>(r) * w;
    double* __restrict o = out + row;
    if (form_ == NoiseForm::additive) {
      for (int m = 0; m < w; ++m) o[m] += a * d[m];
    } else {
      const double* __restrict xr = x + row;
      for (int m = 0; m < w; ++m) o[m] += a * xr[m] * d[m];
    }
  }
}

template <class Before>
void SdeBatch::advance(double* x, double dt, const StepNoise& noise, double t0, double t1,
                       Before before) {
  const long n = size_;
  double* __restrict f0 = f0_.data();
  double* __restrict p = predictor_.data();
  before(t0);
  model_.rhs(x, f0, width_);
  for (long i = 0; i < n; ++i) p[i] = x[i] + dt * f0[i];
  add_noise(x, noise.a0, noise.dw0, 1.0, p);
  if (method_ == SdeMethod::euler_maruyama) {
    for (long i = 0; i < n; ++i) x[i] = p[i];
    return;
  }
  // Heun: the drift and the noise are both averaged over x and the predictor. The noise of
  // the predictor is taken before x is overwritten, so the two halves see the same step.
  double* __restrict f1 = f1_.data();
  before(t1);
  model_.rhs(p, f1, width_);
  const double half = 0.5 * dt;
  // f1 becomes the increment: (f0 + f1) dt/2 + (a0 g(x) dw0 + a1 g(p) dw1)/2.
  for (long i = 0; i < n; ++i) f1[i] = half * (f0[i] + f1[i]);
  add_noise(x, noise.a0, noise.dw0, 0.5, f1);
  add_noise(p, noise.a1, noise.dw1, 0.5, f1);
  for (long i = 0; i < n; ++i) x[i] += f1[i];
}

template <class Before>
void SdeBatch::tangent(const double* x, const double* p, double* v, double dt,
                       const StepNoise& noise, double t0, double t1, Before before) {
  const long n = size_;
  const bool multiplicative = form_ == NoiseForm::multiplicative;
  double* __restrict d0 = d0_.data();
  double* __restrict dp = dp_.data();
  before(t0);
  model_.tangent(x, v, d0, width_);
  for (long i = 0; i < n; ++i) dp[i] = v[i] + dt * d0[i];
  if (multiplicative) add_noise(v, noise.a0, noise.dw0, 1.0, dp);
  if (method_ == SdeMethod::euler_maruyama) {
    for (long i = 0; i < n; ++i) v[i] = dp[i];
    return;
  }
  double* __restrict d1 = d1_.data();
  before(t1);
  model_.tangent(p, dp, d1, width_);
  const double half = 0.5 * dt;
  for (long i = 0; i < n; ++i) d1[i] = half * (d0[i] + d1[i]);
  if (multiplicative) {
    add_noise(v, noise.a0, noise.dw0, 0.5, d1);
    add_noise(dp, noise.a1, noise.dw1, 0.5, d1);
  }
  for (long i = 0; i < n; ++i) v[i] += d1[i];
}

void SdeBatch::step_tangent(double* x, double* tangents, int vectors, double dt,
                            const StepNoise& noise, double t0, double t1,
                            Rk4Batch::StageClock* clock) {
  if (!model_.has_tangent()) {
    throw std::invalid_argument("SDE tangent step: the model has no tangent-linear product");
  }
  const long n = size_;
  for (auto* buffer : {&start_, &d0_, &d1_, &dp_}) {
    if (static_cast<long>(buffer->size()) != n) buffer->assign(static_cast<std::size_t>(n), 0.0);
  }
  std::copy(x, x + n, start_.data());
  // The state first, with step()'s arithmetic; its predictor stays in predictor_.
  if (clock != nullptr) {
    step_at(x, dt, noise, t0, t1, *clock);
  } else {
    step(x, dt, noise);
  }
  const auto before = [&](double t) {
    if (clock != nullptr) clock->set_time(t);
  };
  for (int j = 0; j < vectors; ++j) {
    tangent(start_.data(), predictor_.data(), tangents + j * n, dt, noise, t0, t1, before);
  }
}

void SdeBatch::step(double* x, double dt, const StepNoise& noise) {
  advance(x, dt, noise, 0.0, dt, [](double) {});
}

void SdeBatch::step_at(double* x, double dt, const StepNoise& noise, double t0, double t1,
                       Rk4Batch::StageClock& clock) {
  advance(x, dt, noise, t0, t1, [&](double t) { clock.set_time(t); });
}

}  // namespace chaosweep::integrators
