// Internal to run/: the fused kernel for lorenz96 (see kernels.hpp). Pure numerics.
#pragma once

#include <memory>

#include "run/kernels.hpp"

namespace chaosweep::run {

/// The fused ring kernel for lorenz96 (Setup::kernel == ring: width a multiple of kLanes, sign or
/// no regimes): RK4, or under integration.method euler-maruyama or heun the stochastic step
/// with the noise of `members`. The moments accumulator holds the selected observables, in
/// selection order.
std::unique_ptr<Kernel> make_ring_kernel(const Setup& setup, const Accumulators& acc,
                                         KernelMembers members);

}  // namespace chaosweep::run
