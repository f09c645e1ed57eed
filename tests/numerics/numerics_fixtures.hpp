// Shared helpers of the numerics tests: building models, random test states, bitwise compare.
#pragma once

#include <cstdint>
#include <cstring>
#include <memory>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "models/model.hpp"

namespace chaosweep::testing {

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

/// Bitwise equality of two doubles (NaN equals NaN with the same payload).
inline bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

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
