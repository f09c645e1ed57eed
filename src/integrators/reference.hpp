// The project's scalar reference integrator: classical RK4 for one member at a time, on
// plain arrays, written without any batching. Tests use it as an oracle for the batch
// integrators and the benchmark measures the production kernels' speed-up against it.
// Pure numerics.
#pragma once

#include <cstdint>
#include <vector>

#include "models/model.hpp"

namespace chaosweep::integrators {

/// RK4 for one member x[state_dim], calling the model's right-hand side at width 1. Performs,
/// per member, the same floating-point operations in the same order as the batch integrators
/// (Rk4Batch and the models' fused kernels), so the results agree bitwise. Stage buffers are
/// allocated once; step() does not allocate. The model must outlive it.
class Rk4Reference {
 public:
  explicit Rk4Reference(const models::Model& model);
  /// Advances x by one step dt in place.
  void step(double* x, double dt);

 private:
  const models::Model& model_;
  int dim_;
  std::vector<double> k1_, k2_, k3_, k4_, stage_;  // each [state_dim]
};

/// `steps` steps of Rk4Reference from x, in place.
void rk4_scalar_reference(const models::Model& model, double* x, double dt, std::int64_t steps);

}  // namespace chaosweep::integrators
