// Shared helpers of the numerics tests: building models, random test states, bitwise compare,
// the long double Box-Muller reference.
#pragma once

#include <cmath>
#include <cstdint>
#include <cstring>
#include <memory>
#include <random>
#include <stdexcept>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include "models/model.hpp"
#include "spec/spec.hpp"

namespace chaosweep::testing {

/// The Box-Muller pair from its two words (run/gaussian_lanes.hpp), evaluated in long double
/// (x87, 64-bit significand) with the C library's logl, cosl and sinl: u1 = 1 - (w1 >> 12) 2^-52,
/// r = sqrt(-2 ln u1); theta = 2 pi y 2^-53 with y the low 51 bits of w2 as a signed integer;
/// (cos theta, sin theta) swapped if bit 61 of w2 is set, then c negated by bit 63 and s by
/// bit 62 (Box and Muller 1958 on those uniforms). The reference is exact to about 2^-63
/// relative, so a difference is the vectorised pair's own error.
struct ReferencePair {
  long double r, c, s;
};
inline ReferencePair reference_pair(std::uint64_t w1, std::uint64_t w2) {
  const long double u1 = 1.0L - static_cast<long double>(w1 >> 12) / 4503599627370496.0L;
  const long double r = std::sqrt(-2.0L * std::log(u1));
  const std::int64_t y = static_cast<std::int64_t>(w2 << 13) / (std::int64_t{1} << 13);
  const long double theta =
      6.283185307179586476925286766559L * static_cast<long double>(y) / 9007199254740992.0L;
  long double c = std::cos(theta), s = std::sin(theta);
  if ((w2 >> 61) & 1) std::swap(c, s);
  if ((w2 >> 63) & 1) c = -c;
  if ((w2 >> 62) & 1) s = -s;
  return {r, r * c, r * s};
}

/// The registry entry of `name` (throws when the model is not registered).
inline const models::ModelInfo& model_info(const std::string& name) {
  const models::ModelInfo* info = models::Registry::instance().find(name);
  if (!info) throw std::runtime_error("model not registered: " + name);
  return *info;
}

/// A model instance with default parameters overridden by `overrides`.
inline std::unique_ptr<models::Model> make_model(const std::string& name,
                                                 const models::ParameterValues& overrides = {}) {
  const models::ModelInfo& info = model_info(name);
  return info.make(models::complete_parameters(info, overrides));
}

/// A small forced Lorenz-63 campaign filled in directly (no YAML), the base the batch tests
/// adjust: one case of 16 members in batches of 8, attractor start, sign regimes of x, a
/// histogram of x, trajectories of 8 members; forcing 2 along (0.6, 0.3, 0.8), dt 0.005.
inline spec::Spec small_lorenz63_spec(const std::string& name) {
  spec::Spec s;
  s.name = name;
  s.model = "lorenz63";
  s.parameters = models::complete_parameters(
      model_info("lorenz63"), {{"forcing", {2.0}}, {"forcing_direction", {0.6, 0.3, 0.8}}});
  s.ensemble.members = 16;
  s.ensemble.initial.kind = spec::InitialKind::attractor;
  s.ensemble.initial.spinup = 10.0;
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-3};
  s.ensemble.seed = 20261202;
  s.integration.dt = 0.005;
  s.integration.spinup = 2.0;
  s.integration.duration = 10.0;
  s.statistics.regimes.kind = spec::RegimeKind::sign;
  s.statistics.regimes.observable = "x";
  s.statistics.regimes.labels = {"positive", "negative"};
  s.statistics.histogram = {true, "x", 20, -30.0, 30.0};
  s.output.trajectories = {8, 0.5};
  s.run.batch_size = 8;
  return s;
}

/// Bitwise equality of two doubles (NaN equals NaN with the same payload).
inline bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

/// Element-wise bitwise equality of two arrays (same_bits for floating point).
template <typename T>
bool bitwise_equal(const std::vector<T>& a, const std::vector<T>& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if constexpr (std::is_floating_point_v<T>) {
      if (!same_bits(a[i], b[i])) return false;
    } else if (a[i] != b[i]) {
      return false;
    }
  }
  return true;
}

/// `spec` with members started far off the attractor of default Lorenz-63 at a large step, so
/// that some members overflow and are flagged during the run.
inline spec::Spec blown_up(spec::Spec s) {
  s.model = "lorenz63";
  s.parameters = models::complete_parameters(model_info("lorenz63"), {});
  s.ensemble.initial.kind = spec::InitialKind::given;
  s.ensemble.initial.state = {1.0, 1.0, 20.0};
  s.ensemble.perturbation = {spec::Distribution::gaussian, 300.0};
  s.integration.dt = 0.01;
  return s;
}

/// `width` member states around `centre`, each component uniform in centre +- spread, stored
/// SoA [dim][width]. The generator is seeded, so a test sees the same states on every run.
inline std::vector<double> random_batch(const std::vector<double>& centre, double spread, int width,
                                        std::uint64_t seed) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(-spread, spread);
  const std::size_t dim = centre.size();
  std::vector<double> x(dim * static_cast<std::size_t>(width));
  for (std::size_t i = 0; i < dim; ++i) {
    for (int m = 0; m < width; ++m) x[i * width + m] = centre[i] + u(gen);
  }
  return x;
}

/// Column m of an SoA batch [dim][width].
inline std::vector<double> column(const std::vector<double>& x, int dim, int width, int m) {
  std::vector<double> c(static_cast<std::size_t>(dim));
  for (int i = 0; i < dim; ++i) c[i] = x[static_cast<std::size_t>(i) * width + m];
  return c;
}

}  // namespace chaosweep::testing
