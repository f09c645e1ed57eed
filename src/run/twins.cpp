// The twin experiment of one batch; see twins.hpp for the time line and definitions.
#include "run/twins.hpp"

#include <algorithm>
#include <cmath>

#include "core/error.hpp"
#include "run/member_noise.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::run {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr std::uint64_t kTwinStream = 1;  // MemberNoise stream of the twin directions

}  // namespace

std::vector<double> twin_leads(const TwinTimes& times, double dt) {
  std::vector<double> lead(static_cast<std::size_t>(times.leads));
  for (std::int64_t k = 0; k < times.leads; ++k) {
    lead[static_cast<std::size_t>(k)] = static_cast<double>(k * times.every_steps) * dt;
  }
  return lead;
}

std::vector<double> twin_direction(std::uint64_t seed, std::int64_t case_index,
                                   std::int64_t member, int dim) {
  const MemberNoise noise(seed, case_index, member, kTwinStream);
  std::vector<double> u(static_cast<std::size_t>(dim));
  double norm2 = 0.0;
  for (int i = 0; i < dim; ++i) {
    u[i] = noise.gaussian(static_cast<std::uint64_t>(i));
    norm2 += u[i] * u[i];
  }
  const double norm = std::sqrt(norm2);  // > 0: Box-Muller draws are never all exactly 0
  for (double& v : u) v /= norm;
  return u;
}

TwinPairs::TwinPairs(const TwinSetup& setup, int state_dim, int width, std::int64_t case_index,
                     std::int64_t first_member, int count, std::unique_ptr<Kernel> kernel)
    : setup_(setup),
      dim_(state_dim),
      width_(width),
      count_(count),
      case_index_(case_index),
      first_member_(first_member),
      kernel_(std::move(kernel)),
      twin_(static_cast<std::size_t>(state_dim) * width, 0.0),
      log_separation_(static_cast<std::size_t>(setup.times.leads) * width, kNaN),
      non_finite_(static_cast<std::size_t>(width), 0),
      spread_(state_dim, width) {
  if (!setup.enabled() || setup.times.leads < 1) throw Error("twins without lead times");
}

std::int64_t TwinPairs::next_event(std::int64_t step) const {
  const TwinTimes& t = setup_.times;
  if (step < t.start_step) return t.start_step;
  if (step >= t.last_step()) return std::numeric_limits<std::int64_t>::max();
  return t.start_step + ((step - t.start_step) / t.every_steps + 1) * t.every_steps;
}

void TwinPairs::advance(std::int64_t from, std::int64_t to) {
  const std::int64_t lo = std::max(from, setup_.times.start_step);
  const std::int64_t hi = std::min(to, setup_.times.last_step());
  if (hi <= lo) return;
  // Step lo + 1 runs from time lo * dt: a scheduled parameter takes the values the members saw
  // over the same steps (the twin kernel sets it in its own model copy at each stage).
  kernel_->set_step(lo);
  kernel_->spin(twin_.data(), static_cast<int>(hi - lo));
}

void TwinPairs::after_step(std::int64_t step, const double* x, const std::vector<double>& base,
                           bool check_finite) {
  const TwinTimes& t = setup_.times;
  if (step < t.start_step || step > t.last_step()) return;
  if (step == t.start_step) start(x);
  const bool lead = (step - t.start_step) % t.every_steps == 0;
  if (check_finite || lead) check_twins_finite(base);
  if (lead) sample((step - t.start_step) / t.every_steps, x);
}

// twin[i][m] = x[i][m] + scale * u_i of member first_member + m (padding: of first_member).
void TwinPairs::start(const double* x) {
  for (int m = 0; m < width_; ++m) {
    const std::int64_t member = first_member_ + (m < count_ ? m : 0);
    const std::vector<double> u = twin_direction(setup_.seed, case_index_, member, dim_);
    for (int i = 0; i < dim_; ++i) {
      const std::size_t k = static_cast<std::size_t>(i) * width_ + m;
      twin_[k] = x[k] + setup_.scale * u[i];
    }
  }
}

// log_separation[lead][m] = log sqrt(sum_i (twin[i][m] - x[i][m])^2); the members' state feeds
// the spread accumulator.
void TwinPairs::sample(std::int64_t lead, const double* x) {
  double* out = log_separation_.data() + static_cast<std::size_t>(lead) * width_;
  std::fill(out, out + width_, 0.0);  // sum over i of the squared differences, i in order
  for (int i = 0; i < dim_; ++i) {
    const double* t = twin_.data() + static_cast<long>(i) * width_;
    const double* v = x + static_cast<long>(i) * width_;
    for (int m = 0; m < width_; ++m) out[m] += (t[m] - v[m]) * (t[m] - v[m]);
  }
  for (int m = 0; m < width_; ++m) out[m] = non_finite_[m] ? kNaN : std::log(std::sqrt(out[m]));
  std::vector<const double*> rows(static_cast<std::size_t>(dim_));
  for (int i = 0; i < dim_; ++i) rows[i] = x + static_cast<long>(i) * width_;
  spread_.add(rows.data());
}

void TwinPairs::check_twins_finite(const std::vector<double>& base) {
  flag_non_finite_columns(twin_.data(), dim_, width_, base, non_finite_);
}

void TwinPairs::save(stats::SavedState& out) const {
  out.put("twins.state", twin_);
  out.put("twins.log_separation", log_separation_);
  out.put("twins.non_finite", std::vector<std::int64_t>(non_finite_.begin(), non_finite_.end()));
  spread_.save("twins.spread.", out);
}

void TwinPairs::load(stats::SavedStateReader& in) {
  twin_ = in.reals("twins.state", twin_.size());
  log_separation_ = in.reals("twins.log_separation", log_separation_.size());
  const std::vector<std::int64_t>& flags = in.integers("twins.non_finite", non_finite_.size());
  for (std::size_t m = 0; m < non_finite_.size(); ++m) non_finite_[m] = flags[m] != 0;
  spread_.load("twins.spread.", in);
}

void TwinPairs::finish(const std::vector<std::uint8_t>& member_non_finite, double dt,
                       BatchResult& result) const {
  const std::int64_t leads = setup_.times.leads;
  std::vector<stats::Moments> per_lead(static_cast<std::size_t>(leads));
  result.spread.assign(static_cast<std::size_t>(count_), kNaN);
  result.horizon.assign(static_cast<std::size_t>(count_), kNaN);
  for (int j = 0; j < count_; ++j) {
    bool valid = !member_non_finite[j] && !non_finite_[j];
    for (std::int64_t k = 0; valid && k < leads; ++k) {
      valid = std::isfinite(log_separation_[static_cast<std::size_t>(k) * width_ + j]);
    }
    if (!valid) continue;
    double variance = 0.0;
    for (int i = 0; i < dim_; ++i) variance += spread_.moments(i, j).variance();
    const double spread = std::sqrt(variance);
    result.spread[j] = spread;
    const double level = std::log(setup_.threshold * spread);
    for (std::int64_t k = 0; k < leads; ++k) {
      const double v = log_separation_[static_cast<std::size_t>(k) * width_ + j];
      per_lead[static_cast<std::size_t>(k)].add(v);
      if (std::isnan(result.horizon[j]) && v > level) {
        result.horizon[j] = static_cast<double>(k * setup_.times.every_steps) * dt;
      }
    }
  }
  result.twin_moments.clear();
  result.twin_moments.reserve(static_cast<std::size_t>(leads) * 3);
  for (const stats::Moments& m : per_lead) m.append_to(result.twin_moments);
}

}  // namespace chaosweep::run
