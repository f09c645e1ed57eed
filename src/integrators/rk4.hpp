// Classical fourth-order Runge-Kutta over a batch of members. Pure numerics: no MPI, no I/O.
#pragma once

#include <vector>

#include "models/model.hpp"

namespace chaosweep::integrators {

/// One RK4 stepper for batches of `width` members of one model (SoA layout, see model.hpp).
/// Stage buffers are allocated once here; step() does not allocate. Not thread-safe: one
/// stepper per thread. The model must outlive the stepper.
class Rk4Batch {
 public:
  Rk4Batch(const models::Model& model, int width);

  /// Advances x ([state_dim][width]) by one step dt in place (by the model's fused step when
  /// it has one for this width: the same operations per member, Model::fused_rk4_step).
  void step(double* x, double dt);

  /// Told each stage's time before the stage's right-hand side is evaluated, so that a
  /// time-dependent parameter can be set (Model::set_parameter). Must not allocate.
  class StageClock {
   public:
    virtual void set_time(double t) = 0;

   protected:
    ~StageClock() = default;
  };

  /// One step from time t0 to t1 (= t0 + dt, given by the caller so that times come from
  /// step counts, never from accumulated sums), with the same arithmetic as step(). The
  /// clock is set to t0 before k1, t0 + dt/2 before k2 (k3 shares it), t1 before k4 (by the
  /// model's fused step when it has one for this width: Model::fused_rk4_step_at).
  void step_at(double* x, double dt, double t0, double t1, StageClock& clock);

  /// The time step_at gives the clock before stage 1 (t0), 2 (t0 + dt/2, shared by k3) or
  /// 4 (t1), for integrators that evaluate the same stages outside this class.
  static double stage_time(int stage, double t0, double t1, double dt) {
    return stage == 1 ? t0 : stage == 2 ? t0 + 0.5 * dt : t1;
  }

  int width() const { return width_; }

 private:
  /// The step; before(stage) runs before stage 1, 2 and 4's right-hand side.
  template <class Before>
  void advance(double* x, double dt, Before before);

  const models::Model& model_;
  int width_;
  long size_;  // state_dim * width
  std::vector<double> k1_, k2_, k3_, k4_, stage_;  // each [state_dim][width]
  std::vector<double> fused_;  // the model's fused step's scratch (empty: it has none)
};

}  // namespace chaosweep::integrators
