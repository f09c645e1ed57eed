// The project's scalar reference integrator: classical RK4 for one member at a time, on
// plain arrays, written without any batching. Tests use it as an oracle for Rk4Batch and the
// benchmark measures the batch integrator's speed-up against it. Pure numerics.
#pragma once

#include <cstdint>

#include "models/model.hpp"

namespace chaosweep::integrators {

/// Integrates one member's state x[state_dim] for `steps` RK4 steps of size dt, calling the
/// model's right-hand side at width 1. Performs, per member, the same floating-point
/// operations in the same order as Rk4Batch::step, so the results agree bitwise.
void rk4_scalar_reference(const models::Model& model, double* x, double dt, std::int64_t steps);

}  // namespace chaosweep::integrators
