// Classical RK4 for ring models (Lorenz-96 type: site k depends on sites k-2 .. k+1, indices
// mod n), one Lanes of members (lanes.hpp) at a time. The operations per member are those of Rk4Batch::step with the
// model's rhs() (rk4.cpp):
//   k1 = f(x), k2 = f(x + dt/2 k1), k3 = f(x + dt/2 k2), k4 = f(x + dt k3),
//   x <- x + dt/6 (((k1 + 2 k2) + 2 k3) + k4),
// the parenthesised sum built up stage by stage, so the results agree bitwise.
//
// Two stages share one sweep around the ring: the first stage runs one site ahead of the
// second, whose neighbours (sites k-2 .. k+1) are then all in registers; only the inputs of
// stages 1 and 3 and the running sum are stored. Pure numerics: header only, no allocation.
#pragma once

#include "integrators/lanes.hpp"
#include "integrators/rk4_step.hpp"

namespace chaosweep::integrators {

/// What the first stage of a fused pair hands to the second at one site: the second stage's
/// input value there (next) and a value the second stage's update needs there (carry).
struct StageOut {
  Lanes next;
  Lanes carry;
};

/// One sweep of two consecutive stages. in(k) is the first stage's input at site k;
/// first(k, f) receives the first stage's tendency at site k and returns its StageOut;
/// second(k, f, carry) receives the second stage's tendency at site k. The first stage runs
/// at sites n-2, n-1, 0 before the sweep (the second stage's wrap-around neighbours), then
/// one site ahead of the second. n >= 4.
/// The first stage's tendencies come from eq1, the second's from eq2 (the same equations unless
/// a parameter changes between the stages' times).
template <typename Equations, typename In, typename First, typename Second>
inline void fused_stage_pair(const Equations& eq1, const Equations& eq2, int n, In in,
                             First first, Second second) {
  const Lanes i4 = in(n - 4), i3 = in(n - 3), i2 = in(n - 2), i1 = in(n - 1), i0 = in(0),
              ip1 = in(1);
  const StageOut last2 = first(n - 2, eq1.site(i4, i3, i2, i1));
  const StageOut last1 = first(n - 1, eq1.site(i3, i2, i1, i0));
  const StageOut site0 = first(0, eq1.site(i2, i1, i0, ip1));
  StageOut cur = site0;
  Lanes nm2 = last2.next, nm1 = last1.next;  // second stage's inputs at k-2, k-1
  Lanes wm1 = i1, w0 = i0, wp1 = ip1;        // first stage's inputs at k-1, k, k+1
  for (int k = 0; k + 1 <= n - 3; ++k) {
    const Lanes wp2 = in(k + 2);
    const StageOut ahead = first(k + 1, eq1.site(wm1, w0, wp1, wp2));
    second(k, eq2.site(nm2, nm1, cur.next, ahead.next), cur.carry);
    nm2 = nm1;
    nm1 = cur.next;
    cur = ahead;
    wm1 = w0;
    w0 = wp1;
    wp1 = wp2;
  }
  second(n - 3, eq2.site(nm2, nm1, cur.next, last2.next), cur.carry);
  second(n - 2, eq2.site(nm1, cur.next, last2.next, last1.next), last2.carry);
  second(n - 1, eq2.site(cur.next, last2.next, last1.next, site0.next), last1.carry);
}

/// Scratch space of ring_rk4_step for n sites, in Lanes.
inline int ring_scratch_lanes(int n) { return 2 * n; }

/// The equations of each stage's right-hand side: at the step's start (stage 1), its middle
/// (stages 2 and 3) and its end (stage 4); all the same without a time-dependent parameter.
template <typename Equations>
struct StageEquations {
  Equations start, middle, end;
};

/// One RK4 step of kLanes members in place: member l's site k at x[k * width + l], l < kLanes.
/// `scratch` holds ring_scratch_lanes(n) Lanes. on_site(k, v) is called with each site's new
/// value v, in site order 0..n-1, right after it is stored.
template <typename Equations, typename OnSite>
inline void ring_rk4_step(const StageEquations<Equations>& stages, const Rk4Steps& steps, int n,
                          double* x, long width, Lanes* scratch, OnSite on_site) {
  // locals: stores to the scratch cannot be taken to change them
  const Equations e1 = stages.start, e23 = stages.middle, e4 = stages.end;
  const Rk4Steps h = steps;
  Lanes* stage3 = scratch;   // [n] x + dt/2 k2, the input of stage 3
  Lanes* sum = scratch + n;  // [n] k1 + 2 k2
  auto state = [x, width](int k) { return load_lanes(x + k * width); };
  fused_stage_pair(
      e1, e23, n, state,
      [&](int k, Lanes k1) { return StageOut{state(k) + h.half * k1, k1}; },
      [&](int k, Lanes k2, Lanes k1) {
        sum[k] = k1 + 2.0 * k2;
        stage3[k] = state(k) + h.half * k2;
      });
  fused_stage_pair(
      e23, e4, n, [stage3](int k) { return stage3[k]; },
      [&](int k, Lanes k3) { return StageOut{state(k) + h.dt * k3, sum[k] + 2.0 * k3}; },
      [&](int k, Lanes k4, Lanes sum3) {
        const Lanes v = state(k) + h.sixth * (sum3 + k4);
        store_lanes(x + k * width, v);
        on_site(k, v);
      });
}

/// The same with constant equations.
template <typename Equations, typename OnSite>
inline void ring_rk4_step(const Equations& eq, const Rk4Steps& h, int n, double* x, long width,
                          Lanes* scratch, OnSite on_site) {
  ring_rk4_step(StageEquations<Equations>{eq, eq, eq}, h, n, x, width, scratch, on_site);
}

/// The same without a per-site callback.
template <typename Equations>
inline void ring_rk4_step(const Equations& eq, const Rk4Steps& h, int n, double* x, long width,
                          Lanes* scratch) {
  ring_rk4_step(eq, h, n, x, width, scratch, [](int, Lanes) {});
}

}  // namespace chaosweep::integrators
