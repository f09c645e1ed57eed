// Internal to run/: the twin experiment of one batch (statistics.twins).
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// Time line (S = spin-up steps, E = every_steps, K = leads - 1 = floor(accumulate_steps / E)):
//   step S        every member m gets a twin: x_m + scale * u_m, u_m a unit vector (Euclidean
//                 norm over all state variables) from member m's own noise stream 1
//                 (gaussian components, normalised); lead 0 is sampled
//   steps S+1 ..  the twins take the same RK4 steps as the members (a second SoA array advanced
//                 by a kernel of the member's own kind, so the arithmetic is the same; with a
//                 schedule the kernel is told the step index, so a twin sees the scheduled
//                 parameter at the same stage times as its member)
//   step S + k E  lead k: log |twin - member| (Euclidean, all state variables) is stored per
//                 member, and the member's state feeds its spread accumulator (k = 0 .. K)
//   step S + K E  the twins stop; members continue to the end of the run
// At finish, per member:
//   spread  = sqrt(sum_i var_k x_i(S + k E)), the member's own variance of each state variable
//             over the K + 1 lead times (n - 1 denominator), summed over the state variables
//   horizon = the first lead k E dt at which log separation > log(threshold * spread), NaN if
//             never or if the pair is not valid
//   a pair is valid when the member stayed finite, the twin stayed finite and every sampled
//   separation was non-zero (a separation of exactly 0 means `scale` was lost to rounding)
// The batch reports, per lead, the moments (n, mean, m2) of the log separation over its valid
// pairs in member order; the reduction merges them in batch order.
#pragma once

#include <cstdint>
#include <limits>
#include <memory>
#include <vector>

#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/kernels.hpp"
#include "spec/spec.hpp"
#include "stats/saved_state.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::run {

/// When twins start and are sampled, in steps of dt; every_steps == 0 means no twins.
using TwinTimes = plan::TwinTimes;  // the plan resolves them (plan.twins)

/// Lead times k * every_steps * dt, k = 0 .. leads - 1, in model time units since the end of the
/// spin-up (the archive's /twins/lead).
std::vector<double> twin_leads(const TwinTimes& times, double dt);

/// What every batch of a case needs for its twins.
struct TwinSetup {
  TwinTimes times;
  double scale = 0.0, threshold = 0.0;
  std::uint64_t seed = 0;  // the ensemble seed (twin directions use the members' stream 1)
  bool enabled() const { return times.every_steps > 0; }
};

/// The unit direction of member (case, member)'s twin: `dim` gaussian draws of the member's
/// noise stream 1, divided by their Euclidean norm.
std::vector<double> twin_direction(std::uint64_t seed, std::int64_t case_index,
                                   std::int64_t member, int dim);

/// Twins of one batch's members, full width ([state_dim][width], padding columns are twins of
/// the batch's first member), with their sampled log separations and the members' spread.
class TwinPairs {
 public:
  /// `kernel` advances the twins (only its spin() is used); the batch holds members
  /// first_member .. first_member + count - 1 of case `case_index`.
  TwinPairs(const TwinSetup& setup, int state_dim, int width, std::int64_t case_index,
            std::int64_t first_member, int count, std::unique_ptr<Kernel> kernel);

  /// The first step after `step` at which something happens to the twins (a start or a lead),
  /// or the largest int64 when nothing more does.
  std::int64_t next_event(std::int64_t step) const;

  /// Advances the twins over steps from+1 .. to, the part of them after the start and up to
  /// the last lead (the members are advanced over the same steps by the caller).
  void advance(std::int64_t from, std::int64_t to);

  /// Events at the end of step `step`, with the members' state x ([state_dim][width]): the
  /// start, a lead sample. With `check_finite` (and at every lead) twins with a non-finite
  /// component are flagged and reset to `base`, so the batch arithmetic stays finite.
  void after_step(std::int64_t step, const double* x, const std::vector<double>& base,
                  bool check_finite);

  /// Arrays `twins.state`, `twins.log_separation`, `twins.non_finite`, `twins.spread.*`.
  void save(stats::SavedState& out) const;
  void load(stats::SavedStateReader& in);

  /// Fills result.twin_moments, result.spread and result.horizon; `member_non_finite` is the
  /// batch's member flags [width].
  void finish(const std::vector<std::uint8_t>& member_non_finite, double dt,
              BatchResult& result) const;

 private:
  void start(const double* x);
  void sample(std::int64_t lead, const double* x);
  void check_twins_finite(const std::vector<double>& base);

  TwinSetup setup_;
  int dim_, width_, count_;
  std::int64_t case_index_, first_member_;
  std::unique_ptr<Kernel> kernel_;
  std::vector<double> twin_;              // [state_dim][width]
  std::vector<double> log_separation_;    // [leads][width], NaN until sampled
  std::vector<std::uint8_t> non_finite_;  // [width], twin flagged
  stats::TimeMoments spread_;             // [state_dim] series of the members' state at leads
};

}  // namespace chaosweep::run
