// Regime classification and residence accounting; see regimes.hpp.
#include "stats/regimes.hpp"

#include <limits>
#include <stdexcept>

#include "core/error.hpp"

namespace chaosweep::stats {

void classify_sign(const double* value, int width, int* regime) {
  for (int m = 0; m < width; ++m) regime[m] = value[m] >= 0.0 ? 0 : 1;
}

void classify_nearest(const std::vector<const double*>& coords,
                      const std::vector<std::vector<double>>& centroids, int width, int* regime) {
  for (int m = 0; m < width; ++m) {
    int best = 0;
    double best_d2 = std::numeric_limits<double>::infinity();
    for (std::size_t r = 0; r < centroids.size(); ++r) {
      double d2 = 0.0;  // squared distance, coordinates summed in order
      for (std::size_t j = 0; j < coords.size(); ++j) {
        const double diff = coords[j][m] - centroids[r][j];
        d2 += diff * diff;
      }
      if (d2 < best_d2) {
        best_d2 = d2;
        best = static_cast<int>(r);
      }
    }
    regime[m] = best;
  }
}

RegimeCounter::RegimeCounter(int regimes, int width) : regimes_(regimes), width_(width) {
  if (regimes < 0 || width < 1) throw std::invalid_argument("RegimeCounter: bad dimensions.");
  const std::size_t size = static_cast<std::size_t>(regimes) * static_cast<std::size_t>(width);
  steps_in_.assign(size, 0);
  episodes_.assign(size, 0);
  transitions_.assign(static_cast<std::size_t>(width), 0);
  current_.assign(static_cast<std::size_t>(width), -1);
  changed_.assign(static_cast<std::size_t>(width), 0);
}

// A run starts where the regime differs from the previous step's (always at the first step);
// a transition is a run start that is not the first step.
void RegimeCounter::add(const int* regime) {
  const int w = width_;
  std::int64_t* __restrict current = current_.data();
  std::int64_t* __restrict changed = changed_.data();
  std::int64_t* __restrict transitions = transitions_.data();
  for (int m = 0; m < w; ++m) {
    const std::int64_t starts = regime[m] != current[m];
    changed[m] = starts;
    transitions[m] += starts & (current[m] >= 0);
    current[m] = regime[m];
  }
  for (int r = 0; r < regimes_; ++r) {
    std::int64_t* __restrict in = steps_in_.data() + static_cast<long>(r) * w;
    std::int64_t* __restrict ep = episodes_.data() + static_cast<long>(r) * w;
    for (int m = 0; m < w; ++m) {
      const std::int64_t hit = regime[m] == r;
      in[m] += hit;
      ep[m] += hit & changed_[m];
    }
  }
  ++steps_;
}

std::int64_t RegimeCounter::steps_in(int r, int member) const {
  return steps_in_[static_cast<long>(r) * width_ + member];
}

std::int64_t RegimeCounter::episodes(int r, int member) const {
  return episodes_[static_cast<long>(r) * width_ + member];
}

double RegimeCounter::fraction(int r, int member) const {
  if (steps_ == 0) return std::numeric_limits<double>::quiet_NaN();
  return static_cast<double>(steps_in(r, member)) / static_cast<double>(steps_);
}

double RegimeCounter::mean_residence(int r, int member, double dt) const {
  const std::int64_t e = episodes(r, member);
  if (e == 0) return std::numeric_limits<double>::quiet_NaN();
  return static_cast<double>(steps_in(r, member)) / static_cast<double>(e) * dt;
}

void RegimeCounter::save(const std::string& prefix, SavedState& out) const {
  out.put(prefix + "steps", std::vector<std::int64_t>{steps_});
  out.put(prefix + "steps_in", steps_in_);
  out.put(prefix + "episodes", episodes_);
  out.put(prefix + "transitions", transitions_);
  out.put(prefix + "current", current_);
}

void RegimeCounter::load(const std::string& prefix, SavedStateReader& in) {
  const std::size_t w = static_cast<std::size_t>(width_);
  const std::int64_t steps = in.integers(prefix + "steps", 1)[0];
  const std::vector<std::int64_t>& current = in.integers(prefix + "current", w);
  for (std::int64_t c : current) {
    if (c < -1 || c >= regimes_) {
      throw Error("the saved batch state's `" + prefix + "current` holds an unknown regime");
    }
  }
  if (steps < 0) throw Error("the saved batch state's `" + prefix + "steps` is negative");
  steps_ = steps;
  steps_in_ = in.integers(prefix + "steps_in", steps_in_.size());
  episodes_ = in.integers(prefix + "episodes", episodes_.size());
  transitions_ = in.integers(prefix + "transitions", w);
  current_ = current;
}

}  // namespace chaosweep::stats
