// The stochastic forcing of a batch, step by step; see forcing_noise.hpp.
#include "run/forcing_noise.hpp"

#include <algorithm>
#include <cmath>

#include "run/batch_work.hpp"
#include "run/gaussian_lanes.hpp"

namespace chaosweep::run {
namespace {

constexpr std::uint64_t kForcingStream = 2;

std::vector<int> noisy_variables(const Setup& s) {
  return s.noise.kind == spec::NoiseKind::none ? std::vector<int>{} : s.noise.variables;
}

}  // namespace

integrators::SdeMethod sde_method(const Setup& s) {
  return s.method == "heun" ? integrators::SdeMethod::heun
                            : integrators::SdeMethod::euler_maruyama;
}

integrators::NoiseForm sde_noise_form(const Setup& s) {
  return s.noise.kind == spec::NoiseKind::multiplicative ? integrators::NoiseForm::multiplicative
                                                         : integrators::NoiseForm::additive;
}

bool schedules_model(const Setup& s) {
  return s.schedule && s.schedule->parameter != spec::kNoiseAmplitudeAxis;
}

ForcingNoise::ForcingNoise(const Setup& s, int width, KernelMembers members)
    : variables_(noisy_variables(s)),
      state_dim_(s.state_dim),
      width_(width),
      dt_(s.dt),
      sqrt_dt_(std::sqrt(s.dt)),
      amplitude_(s.noise.amplitude),
      red_(s.noise.kind == spec::NoiseKind::red),
      decay_(red_ ? std::exp(-s.dt / s.noise.correlation_time) : 0.0),
      innovation_(std::sqrt(1.0 - decay_ * decay_)),
      columns_(s.noise.shared ? 1 : width),
      dw_(variables_.size() * static_cast<std::size_t>(width)) {
  for (int m = 0; m < columns_; ++m) {
    const std::int64_t member = s.noise.shared ? -1 : members.first + (m < members.count ? m : 0);
    keys_.push_back(MemberNoise(s.seed, s.key_case, member, kForcingStream).key());
  }
  if (red_) {
    eta_.assign(dw_.size(), 0.0);
    draws_.assign(dw_.size(), 0.0);
    dw1_.assign(dw_.size(), 0.0);
  }
  if (s.schedule && !schedules_model(s)) amplitude_schedule_.emplace(*s.schedule, s.schedule_offset);
}

integrators::StepNoise ForcingNoise::at(std::int64_t step, double* dw0, double* dw1) {
  integrators::StepNoise noise{amplitude_, amplitude_, dw0, dw0};
  if (amplitude_schedule_) {
    const StepTimes t = step_times(step, dt_);
    noise.a0 = amplitude_schedule_->at(t.t0);
    noise.a1 = amplitude_schedule_->at(t.t1);
  }
  if (red_) {
    red_increments(step, dw0, dw1);
    noise.dw1 = dw1;
  } else {
    draw(step, sqrt_dt_, dw0);
  }
  if (columns_ == 1) {  // a shared realisation: column 0's noise for every member
    broadcast(dw0);
    if (red_) broadcast(dw1);
  }
  return noise;
}

/// Draw `step` of every stream, times `scale`, into out ([variables][width], the first
/// columns_ columns): wiener_increments' values, a Box-Muller pair at a time for every column
/// (run/gaussian_lanes.hpp). A pair shared with the next step (an odd number of noisy
/// variables) keeps its sine branch for it, so steps drawn in order compute each pair once.
/// A shared realisation (one stream) computes the step's pairs side by side instead.
void ForcingNoise::draw(std::int64_t step, double scale, double* out) {
  const int rows = static_cast<int>(variables_.size());
  if (rows == 0) return;
  const std::size_t stride = static_cast<std::size_t>(width_);
  const auto row = [&](int r) { return out + static_cast<std::size_t>(r) * stride; };
  if (columns_ == 1) {  // a shared realisation: the step's pairs of the one stream side by side
    const std::uint64_t first = wiener_draw(step, rows, 0).pair;
    const int count = static_cast<int>(wiener_draw(step, rows, rows - 1).pair - first) + 1;
    stream_c_.resize(static_cast<std::size_t>(count));
    stream_s_.resize(static_cast<std::size_t>(count));
    gaussian_stream(keys_[0], first, count, scale, stream_c_.data(), stream_s_.data());
    for (int v = 0; v < rows; ++v) {
      const WienerDraw d = wiener_draw(step, rows, v);
      const std::size_t i = static_cast<std::size_t>(d.pair - first);
      row(v)[0] = d.sine ? stream_s_[i] : stream_c_[i];
    }
    return;
  }
  if (carried_.empty()) carried_.assign(static_cast<std::size_t>(columns_), 0.0);
  int r = 0;
  if (wiener_draw(step, rows, 0).sine) {  // row 0 is the sine branch of the previous step's pair
    const std::uint64_t pair = wiener_draw(step, rows, 0).pair;
    if (pair == carried_pair_ && carried_scale_ == scale) {
      std::copy(carried_.begin(), carried_.end(), row(0));
    } else {
      gaussian_row(keys_.data(), columns_, pair, scale, nullptr, row(0));
    }
    r = 1;
  }
  for (; r + 1 < rows; r += 2) {
    gaussian_row(keys_.data(), columns_, wiener_draw(step, rows, r).pair, scale, row(r),
                 row(r + 1));
  }
  if (r < rows) {  // the cosine branch here, the sine branch for the next step
    carried_pair_ = wiener_draw(step, rows, r).pair;
    carried_scale_ = scale;
    gaussian_row(keys_.data(), columns_, carried_pair_, scale, row(r), carried_.data());
  }
}

/// Column 0 of every row copied to the others.
void ForcingNoise::broadcast(double* rows) const {
  const std::size_t stride = static_cast<std::size_t>(width_);
  for (std::size_t r = 0; r < variables_.size(); ++r) {
    double* row = rows + r * stride;
    std::fill(row + 1, row + width_, row[0]);
  }
}

/// eta <- a eta + sqrt(1 - a^2) xi_step, in place, on the first columns_ columns.
void ForcingNoise::next_eta(std::int64_t step) {
  draw(step, 1.0, draws_.data());
  const std::size_t stride = static_cast<std::size_t>(width_);
  for (std::size_t r = 0; r < variables_.size(); ++r) {
    for (int m = 0; m < columns_; ++m) {
      const std::size_t i = r * stride + static_cast<std::size_t>(m);
      eta_[i] = decay_ * eta_[i] + innovation_ * draws_[i];
    }
  }
}

/// dw0 <- eta(step) dt, dw1 <- eta(step + 1) dt; eta_ left at step + 1. Replays the draws
/// from step 0 when eta_ is not at `step` (a new source, or a resume).
void ForcingNoise::red_increments(std::int64_t step, double* dw0, double* dw1) {
  if (eta_step_ < 0 || eta_step_ > step) {
    draw(0, 1.0, eta_.data());
    eta_step_ = 0;
  }
  while (eta_step_ < step) next_eta(++eta_step_);
  const std::size_t n = dw_.size();
  for (std::size_t i = 0; i < n; ++i) dw0[i] = eta_[i] * dt_;
  next_eta(++eta_step_);
  for (std::size_t i = 0; i < n; ++i) dw1[i] = eta_[i] * dt_;
}

}  // namespace chaosweep::run
