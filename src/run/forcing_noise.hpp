// Internal to run/: the stochastic forcing of one batch of members, step by step: the
// increments and amplitudes an integrators::SdeBatch step takes. Pure numerics.
//
// The Gaussian draw of noisy variable i at step n of member m is keyed by (seed, case, m, n, i)
// (run/member_noise.hpp, wiener_draw: the variable's position among the noisy ones),
// the case being the reference case when cases are paired (spec::key_case)
// (run/member_noise.hpp, stream 2); with a shared realisation the member is left out (every
// member draws member -1's stream). So the same member gets the same forcing in any batch, on
// any rank, after any resume, in its twin's integration and in its Lyapunov integration.
// Step n runs from t0 = n dt to t1 = (n + 1) dt (run/schedule.hpp).
//
// White noise (additive, multiplicative): draw n, times sqrt(dt), is the Wiener increment of
// step n (dw0 = dw1).
// Red noise: eta_i is the unit-variance Ornstein-Uhlenbeck process of correlation time T,
// started from its stationary law and advanced by its exact update,
//   eta(0) = xi_0,  eta(n + 1) = a eta(n) + sqrt(1 - a^2) xi_(n+1),  a = exp(-dt / T),
// with xi_n the unit Gaussian draw n; an ordinary forcing A eta whose step increments are
// dw0 = eta(n) dt and dw1 = eta(n + 1) dt (Euler-Maruyama takes A(t0) dw0, Heun the trapezoid
// (A(t0) dw0 + A(t1) dw1) / 2). eta is a pure function of the draws up to step n: asked for a
// step its eta is not at, the source replays the draws from step 0 (after a resume), so eta
// never needs to be checkpointed.
// A scheduled noise amplitude gives a0 = A(t0), a1 = A(t1); otherwise both are the case's A.
#pragma once

#include <cstdint>
#include <optional>
#include <vector>

#include "integrators/sde.hpp"
#include "run/kernels.hpp"
#include "run/member_noise.hpp"
#include "run/schedule.hpp"

namespace chaosweep::run {

class ForcingNoise {
 public:
  /// The forcing of a batch of `width` columns holding `members` (columns from members.count
  /// on draw the first member's noise), under the case's setup (method, noise, schedule,
  /// seed, case). Without noise every step's increments are empty and the amplitude 0.
  ForcingNoise(const Setup& setup, int width, KernelMembers members);

  /// The noise of step n ([noisy variables][width] increments, valid until the next call).
  integrators::StepNoise at(std::int64_t step) { return at(step, dw_.data(), dw1_.data()); }

  /// The noise of step n written to dw0 and, for red noise, dw1 (each [noisy variables][width]),
  /// which the result points to: the same values as at(step).
  integrators::StepNoise at(std::int64_t step, double* dw0, double* dw1);

  /// The state indices of the noisy variables (empty without noise).
  const std::vector<int>& variables() const { return variables_; }

 private:
  void draw(std::int64_t step, double scale, double* out);
  void broadcast(double* rows) const;
  void next_eta(std::int64_t step);
  void red_increments(std::int64_t step, double* dw0, double* dw1);

  std::vector<int> variables_;
  int state_dim_, width_;
  double dt_, sqrt_dt_, amplitude_;
  bool red_;
  double decay_, innovation_;  // red: a = exp(-dt / T), sqrt(1 - a^2)
  int columns_;                // streams: 1 (shared realisation) or width
  std::vector<std::uint64_t> keys_;  // [columns_]: each column's stream key (MemberNoise::key)
  /// The sine branch of the last pair drawn, times its scale, when it belongs to the next step
  /// (an odd number of noisy variables): [columns_], pair carried_pair_ (none: ~0) at
  /// carried_scale_.
  std::vector<double> carried_;
  std::uint64_t carried_pair_ = ~std::uint64_t{0};
  double carried_scale_ = 0.0;
  std::vector<double> stream_c_, stream_s_;  // a shared realisation: the step's pairs' branches
  std::optional<ParameterSchedule> amplitude_schedule_;
  std::vector<double> dw_;                 // [variables][width]: the step's dw0
  std::vector<double> eta_, draws_, dw1_;  // red: [variables][width]
  std::int64_t eta_step_ = -1;             // red: the step eta_ holds; -1: none yet
};

/// The scheme of integration.method ("heun" or "euler-maruyama") and the noise's form.
integrators::SdeMethod sde_method(const Setup& setup);
integrators::NoiseForm sde_noise_form(const Setup& setup);

/// Whether a schedule varies a model parameter (not the noise amplitude).
bool schedules_model(const Setup& setup);

}  // namespace chaosweep::run
