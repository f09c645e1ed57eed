// Internal to run/: the integration kernels that advance one batch over runs of steps
// ("segments"), either plainly (spin-up) or feeding the accumulators after every step.
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// Three kernels, chosen once per case (choose_kernel) and giving bitwise the same numbers:
//  - fused:   models with a small fixed state (lorenz63, lorenz84). RK4 (or, lorenz63 only,
//             Euler-Maruyama or Heun on the increments of the batch's ForcingNoise,
//             run/forcing_noise.hpp) and every accumulator update run member-parallel on Lanes
//             (one SIMD register of members, 8 with AVX-512: integrators/lanes.hpp), a few
//             Lanes interleaved so the FMA pipelines stay busy, the state and the running sums
//             held in registers for a whole segment. Moments are kept for every state variable.
//  - ring:    lorenz96. RK4 stages fused into sweeps around the ring on Lanes (or Euler-Maruyama
//             or Heun site by site on ForcingNoise's increments), the accumulators fed as each
//             site's new value comes out of the last sweep.
//  - generic: any model. Rk4Batch or SdeBatch (the model's batched rhs) and the generic
//             per-step feed.
// A scheduled (time-dependent) model parameter is set at every stage time: under RK4 the fused
// and ring kernels evaluate it once per step for the whole batch and step with per-stage
// equations; under the stochastic schemes the generic kernel integrates the batch's own copy
// of the model and sets the parameter in it.
// The fused and ring kernels need a batch width that is a multiple of kLanes (every width the
// spec allows, a multiple of 8, is). Every member of a batch sees the same operations whatever
// its column, so results never depend on it.
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "models/model.hpp"
#include "stats/extremes.hpp"
#include "stats/histogram.hpp"
#include "stats/regimes.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::run {

struct Setup;

enum class KernelKind { generic, fused, ring };

/// The kernel for a case: fused or ring when the model has one, the width is a
/// multiple of kLanes and (fused) every observable, the regime coordinate and the histogram
/// observable are state variables with sign or no regimes, and no model parameter is scheduled
/// under a stochastic scheme; generic otherwise.
KernelKind choose_kernel(const Setup& setup);

/// The accumulators a kernel feeds (owned by the batch). Moments and extremes hold one series
/// per state variable for the fused kernel, one per selected observable otherwise; both are
/// needed by accumulate() (a kernel that only spins may have neither).
struct Accumulators {
  stats::TimeMoments* moments = nullptr;
  stats::RegimeCounter* regimes = nullptr;      // null: no regimes
  stats::MemberHistogram* histogram = nullptr;  // null: no histogram
  stats::Extremes* extremes = nullptr;
};

class Kernel {
 public:
  virtual ~Kernel() = default;
  /// The step index the next spin() or accumulate() starts from (its first step runs from
  /// time step * dt); kernels whose equations depend on time use it, the others ignore it.
  virtual void set_step(std::int64_t step) { (void)step; }
  /// `steps` RK4 steps of x ([state_dim][width]) without accumulation.
  virtual void spin(double* x, int steps) = 0;
  /// `steps` RK4 steps, feeding the accumulators after each. steps <= kMaxSegment and the
  /// run must not cross a moments block (steps <= moments->block_room()).
  virtual void accumulate(double* x, int steps) = 0;
  /// Whether accumulate() can record the batch state after chosen steps (tap()); a kernel that
  /// cannot has its runs of steps ended wherever a state is needed.
  virtual bool taps() const { return false; }
  /// For the next accumulate() only: after its steps after[0] < after[1] < ... (counted from 1),
  /// the batch state goes to states + i * state_dim * width ([state_dim][width], as x).
  virtual void tap(const int* after, int count, double* states) {
    (void)after; (void)count; (void)states;
  }
};

/// Longest run of steps one accumulate() call takes.
constexpr int kMaxSegment = 32;

/// The kernel of kind setup.kernel for one batch. `model` must outlive it.
/// Flags (flags[m] = 1) every column m of the batch x ([dim][width], SoA) that has a
/// non-finite component, and resets every flagged column to `base`, so that a blown-up member
/// keeps the vectorised arithmetic of its batch finite.
void flag_non_finite_columns(double* x, int dim, int width, const std::vector<double>& base,
                             std::vector<std::uint8_t>& flags);

/// The members of the batch a kernel integrates, for kernels whose noise is keyed by member.
struct KernelMembers {
  std::int64_t first = 0;
  int count = 1;  // columns count .. width-1 are padding: they draw the first member's noise
};

std::unique_ptr<Kernel> make_kernel(const Setup& setup, const models::Model& model,
                                    const Accumulators& acc, KernelMembers members = {});

}  // namespace chaosweep::run
