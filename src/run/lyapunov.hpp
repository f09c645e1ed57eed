// Lyapunov exponents of ensemble members: the state and k tangent vectors stepped by the tangent
// of the discrete RK4 map (integrators/tangent_rk4.hpp), re-orthonormalised by QR
// (stats/lyapunov.hpp).
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
#pragma once

#include <cstdint>
#include <vector>

#include "integrators/rk4.hpp"
#include "models/model.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::run {

struct Setup;

/// The k leading Lyapunov exponents of each of `count` members.
///
///   model     a model with has_tangent() true (else std::invalid_argument)
///   initial   [count][state_dim] member start states, member-major (member m's state at
///             initial[m * state_dim .. m * state_dim + state_dim - 1])
///   count     number of members (>= 0)
///   dt        RK4 step (> 0)
///   spinup_steps   steps integrated first (>= 0) without accumulating: the tangent vectors
///             evolve and are re-orthonormalised, so they align with the leading directions
///   steps     steps over which log|R_ii| are accumulated (>= 1)
///   exponents k, the number of exponents, 1 <= k <= state_dim
///   renormalise_every_steps  steps between QR re-orthonormalisations (>= 1); also done at the
///             end of spin-up and at the last step
///   clock     null for an autonomous model; else told each RK4 stage's time before the stage's
///             rhs and tangent products (step n, counted from 0 at the start of the spin-up,
///             runs from n dt to (n + 1) dt; stage times as Rk4Batch::step_at gives them). The
///             clock may change `model`'s parameters (run::ScheduledParameter on the same model
///             object sets a scheduled parameter), so the state follows exactly the trajectory
///             of the members' scheduled integration, and the tangent vectors its linearisation.
///             The exponents are then finite-time averages of the growth rates over the
///             accumulation window of this time-dependent system.
///   stochastic  null for RK4; else the case's Setup with a stochastic method (euler-maruyama
///             or heun): each member is integrated by that scheme under its own forcing
///             (run/forcing_noise.hpp, member first_member + m of the case), the tangent
///             vectors by the tangent of the scheme's map with the noise fixed
///             (integrators::SdeBatch::step_tangent): the exponents of the random dynamical
///             system along the member's realisation. The clock then sets a scheduled model
///             parameter at the scheme's stage times.
///
/// Returns [count][k], member-major, per member in descending order: exponent i is the sum of
/// log|R_ii| over the accumulation divided by steps * dt. The tangent vectors start as the
/// first k unit vectors and follow the RK4 stages linearised (integrators::TangentRk4Batch),
/// so they are the exact derivative of the discrete map that moves the state.
/// A member whose state or tangent vectors turn non-finite gets NaN exponents. Deterministic:
/// bitwise the same result for the same inputs, and a member's exponents do not depend on the
/// other members (members are integrated in padded batches of up to 64, and a member's
/// operations do not depend on its column or the batch width).
std::vector<double> lyapunov_exponents(const models::Model& model,
                                       const std::vector<double>& initial, int count, double dt,
                                       std::int64_t spinup_steps, std::int64_t steps,
                                       int exponents, std::int64_t renormalise_every_steps,
                                       integrators::Rk4Batch::StageClock* clock = nullptr,
                                       const Setup* stochastic = nullptr,
                                       std::int64_t first_member = 0);

/// The leading Lyapunov exponents of a finished batch's members (statistics.lyapunov; nothing
/// when not requested), from their initial states: a second integration with tangent vectors
/// over the plan's spin-up and accumulation, NaN for members that became non-finite.
void add_lyapunov(const spec::Spec& spec, const plan::Plan& plan, BatchResult& result);

}  // namespace chaosweep::run
