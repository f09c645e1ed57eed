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

  /// Advances x ([state_dim][width]) by one step dt in place.
  void step(double* x, double dt);

  int width() const { return width_; }

 private:
  const models::Model& model_;
  int width_;
  long size_;  // state_dim * width
  std::vector<double> k1_, k2_, k3_, k4_, stage_;  // each [state_dim][width]
};

}  // namespace chaosweep::integrators
