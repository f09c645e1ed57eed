// Stochastic steppers over a batch of members: Euler-Maruyama (Ito) and stochastic Heun
// (Stratonovich). Pure numerics: the caller supplies the Wiener increments, so where they
// come from (and their reproducibility) is decided above this layer.
#pragma once

#include <vector>

#include "integrators/rk4.hpp"
#include "models/model.hpp"

namespace chaosweep::integrators {

/// How the noise enters the noisy variables i: additive, dx_i = f_i dt + A dW_i, or
/// multiplicative, dx_i = f_i dt + A x_i dW_i.
enum class NoiseForm { additive, multiplicative };

/// The scheme. Without noise (no noisy variables, or A = 0) Euler-Maruyama is the forward
/// Euler method and Heun the explicit trapezoidal rule.
enum class SdeMethod {
  /// x <- x + f(x) dt + g(x) dW. Strong order 1/2, weak order 1; Ito calculus.
  euler_maruyama,
  /// p = x + f(x) dt + g(x) dW; x <- x + (f(x) + f(p)) dt/2 + (g(x) + g(p)) dW/2.
  /// Converges to the Stratonovich solution; weak order 2 for additive noise.
  heun,
};

/// The noise of one step from t0 to t1: the amplitude at each end and the increments the
/// scheme multiplies g(x) (dw0, at t0) and g(p) (dw1, Heun's corrector, at t1) by, each
/// [variables][width]. The predictor (and Euler-Maruyama's whole step) takes a0 g(x) dw0,
/// Heun's corrector (a0 g(x) dw0 + a1 g(p) dw1) / 2. White noise gives dw1 = dw0 = dW;
/// a noise that is an ordinary forcing (red noise) gives its values at t0 and t1 times dt.
struct StepNoise {
  double a0 = 0.0, a1 = 0.0;
  const double* dw0 = nullptr;
  const double* dw1 = nullptr;
};

/// One stepper for batches of `width` members of one model (SoA layout, see model.hpp),
/// with noise on `variables` (distinct state indices). Buffers are allocated once here; the
/// steps do not allocate. Not thread-safe. The model must outlive the stepper.
class SdeBatch {
 public:
  SdeBatch(const models::Model& model, int width, SdeMethod method, NoiseForm form,
           std::vector<int> variables);

  /// Advances x ([state_dim][width]) by one step dt in place, with amplitude A and the
  /// Wiener increments dw ([variables.size()][width], each N(0, dt)).
  void step(double* x, double dt, double amplitude, const double* dw) {
    step(x, dt, StepNoise{amplitude, amplitude, dw, dw});
  }

  /// One step with the noise given per end of the step (StepNoise).
  void step(double* x, double dt, const StepNoise& noise);

  /// One step from t0 to t1 (= t0 + dt, from step counts) with the same arithmetic as
  /// step(), for a model with a time-dependent parameter: the clock is set to t0 before
  /// f(x) and to t1 before Heun's f(p).
  void step_at(double* x, double dt, const StepNoise& noise, double t0, double t1,
               Rk4Batch::StageClock& clock);

  /// step() together with the tangent of the step's map (the noise fixed) for `vectors`
  /// tangent vectors (tangents: [vectors][state_dim][width], vector j at
  /// tangents + j * state_dim * width); the state gets bitwise what step() gives it. With x
  /// the state at the start, p the predictor, J the model's tangent(), G v the noise's
  /// linearisation (0 for additive noise, v on the noisy rows for multiplicative noise):
  ///   dp = v + J(x) v dt + a0 G v dw0                        (Euler-Maruyama: v <- dp)
  ///   v <- v + (J(x) v + J(p) dp) dt/2 + (a0 G v dw0 + a1 G dp dw1)/2          (Heun)
  /// With a clock (non-null) it is set to t0 before J(x) and to t1 before J(p), for each vector.
  void step_tangent(double* x, double* tangents, int vectors, double dt, const StepNoise& noise,
                    double t0, double t1, Rk4Batch::StageClock* clock);

  int width() const { return width_; }
  SdeMethod method() const { return method_; }

 private:
  /// The step; before(t) runs before each right-hand side at time t.
  template <class Before>
  void advance(double* x, double dt, const StepNoise& noise, double t0, double t1,
               Before before);

  /// g(x) dW added to out on the noisy rows: A dW, or A x dW.
  void add_noise(const double* x, double amplitude, const double* dw, double scale,
                 double* out) const;

  const models::Model& model_;
  int width_;
  long size_;  // state_dim * width
  SdeMethod method_;
  NoiseForm form_;
  std::vector<int> variables_;
  /// The tangent step of one vector v in place, x and p the step's start and predictor.
  template <class Before>
  void tangent(const double* x, const double* p, double* v, double dt, const StepNoise& noise,
               double t0, double t1, Before before);

  std::vector<double> f0_, f1_, predictor_;  // each [state_dim][width]
  std::vector<double> start_, d0_, d1_, dp_;   // tangent steps: each [state_dim][width]
};

}  // namespace chaosweep::integrators
