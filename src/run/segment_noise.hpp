// Internal to run/: the stochastic forcing of a run of steps for the fused kernels, written by
// the batch's ForcingNoise (run/forcing_noise.hpp, the one source of the forcing) step by step,
// so that every path draws the same increments. Pure numerics.
#pragma once

#include <cstdint>
#include <vector>

#include "run/batch_work.hpp"
#include "run/forcing_noise.hpp"
#include "run/kernels.hpp"

namespace chaosweep::run {

/// The increments of up to kMaxSegment steps: dw0 (and, for red noise, dw1) as
/// [steps][rows][width], row r the noisy state variable variables()[r]; the amplitudes a0, a1
/// per step (integrators::StepNoise). White noise has dw1 = dw0.
class SegmentNoise {
 public:
  SegmentNoise(const Setup& s, KernelMembers members)
      : noise_(s, s.width, members),
        width_(s.width),
        rows_(static_cast<int>(noise_.variables().size())),
        red_(s.noise.kind == spec::NoiseKind::red),
        dw0_(static_cast<std::size_t>(kMaxSegment) * rows_ * s.width),
        dw1_(red_ ? dw0_.size() : 0),
        a0_(kMaxSegment),
        a1_(kMaxSegment) {}

  /// The noise of steps first .. first + steps - 1 (steps <= kMaxSegment).
  void take(std::int64_t first, int steps) {
    const std::size_t n = static_cast<std::size_t>(rows_) * width_;
    for (int t = 0; t < steps; ++t) {
      const std::size_t at = static_cast<std::size_t>(t) * n;
      const integrators::StepNoise step =
          noise_.at(first + t, dw0_.data() + at, red_ ? dw1_.data() + at : nullptr);
      a0_[t] = step.a0;
      a1_[t] = step.a1;
    }
  }

  const std::vector<int>& variables() const { return noise_.variables(); }
  int rows() const { return rows_; }
  const double* dw0() const { return dw0_.data(); }
  const double* dw1() const { return red_ ? dw1_.data() : dw0_.data(); }
  const double* a0() const { return a0_.data(); }
  const double* a1() const { return a1_.data(); }

 private:
  ForcingNoise noise_;
  int width_, rows_;
  bool red_;
  std::vector<double> dw0_, dw1_;  // [kMaxSegment][rows][width] (dw1: red noise only)
  std::vector<double> a0_, a1_;    // [kMaxSegment]
};

}  // namespace chaosweep::run
