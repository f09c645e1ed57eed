// The tangent of the discrete RK4 map over a batch of members: one classical RK4 step of the
// state together with the same step linearised for k tangent vectors. Pure numerics: no MPI,
// no I/O.
#pragma once

#include <vector>

#include "integrators/rk4.hpp"
#include "models/model.hpp"

namespace chaosweep::integrators {

/// One stepper for batches of `width` members of one model with `vectors` tangent vectors per
/// member (SoA layout, see model.hpp). Stage buffers are allocated once here; step() does not
/// allocate. Not thread-safe: one stepper per thread. The model must outlive the stepper.
class TangentRk4Batch {
 public:
  /// Throws std::invalid_argument when the model has no tangent-linear product, width < 1 or
  /// vectors < 0.
  TangentRk4Batch(const models::Model& model, int width, int vectors);

  /// Advances x ([state_dim][width]) by one step dt in place, with the arithmetic of
  /// Rk4Batch::step (so bitwise the same state), and replaces every tangent vector v
  /// (tangents: [vectors][state_dim][width], vector j at tangents + j * state_dim * width) by
  /// D Phi(x) v, Phi the RK4 map and x the state at the start of the step:
  ///   dk1 = J(x) v, dk2 = J(x + dt/2 k1)(v + dt/2 dk1), dk3 = J(x + dt/2 k2)(v + dt/2 dk2),
  ///   dk4 = J(x + dt k3)(v + dt dk3), v <- v + dt/6 (dk1 + 2 dk2 + 2 dk3 + dk4),
  /// with J the model's tangent() and k1 .. k4 the state's stages (by the model's fused
  /// step when it has one for this width: the same operations per member,
  /// Model::fused_tangent_rk4_step).
  void step(double* x, double* tangents, double dt);

  /// One step from time t0 to t1 (= t0 + dt, given by the caller), with the same arithmetic as
  /// step(). The clock is set to each stage's time (Rk4Batch::stage_time) before that stage's
  /// right-hand side, and again before its tangent products for each vector in turn.
  void step_at(double* x, double* tangents, double dt, double t0, double t1,
               Rk4Batch::StageClock& clock);

  int width() const { return width_; }
  int vectors() const { return vectors_; }

 private:
  /// The step; before(stage) runs before stage 1, 2 and 4's right-hand side and before the
  /// same stages' tangent products of each vector.
  template <class Before>
  void advance(double* x, double* tangents, double dt, Before before);

  const models::Model& model_;
  int width_, vectors_;
  long size_;  // state_dim * width
  // stage_: the stage states s1 .. s4, slope_: k1 .. k4, dk_: dk1 .. dk4, each 4 x
  // [state_dim][width]; w_: a tangent stage's input, [state_dim][width].
  std::vector<double> stage_, slope_, dk_, w_;
  std::vector<double> fused_;  // the model's fused tangent step's scratch
};

}  // namespace chaosweep::integrators
