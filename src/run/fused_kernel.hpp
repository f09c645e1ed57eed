// Internal to run/: the fused kernel for models with a small fixed state (see kernels.hpp).
// Pure numerics.
#pragma once

#include <memory>

#include "run/kernels.hpp"

namespace chaosweep::run {

/// The fused kernel for the model's equations (lorenz63 or lorenz84: Setup::kernel == fused,
/// width a multiple of kLanes): RK4, with a scheduled model parameter evaluated at the stage
/// times or without, or (lorenz63) under integration.method euler-maruyama or heun the
/// stochastic step with the noise of `members` (run/forcing_noise.hpp). The moments
/// accumulator must hold one series per state variable, in state order.
std::unique_ptr<Kernel> make_fused_kernel(const Setup& setup, const Accumulators& acc,
                                          KernelMembers members);

}  // namespace chaosweep::run
