// Internal to run/: sign-regime accounting for one Lanes of members over a segment of steps,
// used by the fused kernels. Pure numerics.
#pragma once

#include <cstdint>

#include "integrators/lanes.hpp"
#include "stats/regimes.hpp"

namespace chaosweep::run {

/// Sign-regime counts of one Lanes over one segment. Per step, with regime = 0 where the
/// value is >= 0 and 1 otherwise (NaN too), a run starts where regime != current; the segment
/// counts steps in regime 1, run starts, and run starts in regime 1. At the end these update
/// RegimeCounter's rows (regimes.hpp) for the segment's `steps` steps:
///   steps_in[1] += in1,  steps_in[0] += steps - in1,  episodes[1] += starts1,
///   episodes[0] += starts - starts1,  transitions += starts - (1 if current was -1 before).
/// Lane comparisons give -1 (true) or 0, so subtracting a mask counts 1 where it holds.
struct RegimeLanes {
  using Ints = integrators::LaneInts;
  Ints in1, starts, starts1, current, unset;

  void begin(const stats::RegimeCounter::Rows& r, long lane) {
    current = integrators::load_lanes(r.current + lane);
    unset = current < 0;  // -1 before the member's first step
    in1 = starts = starts1 = current - current;
  }
  void add(integrators::Lanes v) {
    const Ints regime = (v >= 0.0) + 1;  // 0 where v >= 0, else 1
    const Ints start = regime != current;
    starts -= start;
    starts1 += start & regime;
    in1 += regime;
    current = regime;
  }
  void end(const stats::RegimeCounter::Rows& r, long width, long lane, int steps) const {
    auto update = [lane](std::int64_t* row, Ints delta) {
      integrators::store_lanes(row + lane, integrators::load_lanes(row + lane) + delta);
    };
    update(r.steps_in, steps - in1);
    update(r.steps_in + width, in1);
    update(r.episodes, starts - starts1);
    update(r.episodes + width, starts1);
    update(r.transitions, starts + unset);
    integrators::store_lanes(r.current + lane, current);
  }
};

}  // namespace chaosweep::run
