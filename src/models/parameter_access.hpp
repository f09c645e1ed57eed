// Reading complete parameter values inside a model factory. Pure: no I/O.
//
// The spec loader has already checked names, bounds and integrality against ParameterInfo;
// these helpers check what only the model knows (component counts) and throw
// std::invalid_argument with a one-sentence message, as ModelInfo::make documents.
#pragma once

#include <cstddef>
#include <stdexcept>
#include <string>
#include <vector>

#include "models/model.hpp"

namespace chaosweep::models {

/// The components of parameter `name`; throws unless it is present with `size` components.
inline const std::vector<double>& vector_parameter(const ParameterValues& values,
                                                   const std::string& name, std::size_t size) {
  const auto it = values.find(name);
  if (it == values.end()) throw std::invalid_argument("parameter '" + name + "' is missing.");
  if (it->second.size() != size) {
    throw std::invalid_argument("parameter '" + name + "' needs " + std::to_string(size) +
                                " component(s), got " + std::to_string(it->second.size()) + ".");
  }
  return it->second;
}

/// The value of scalar parameter `name`.
inline double scalar_parameter(const ParameterValues& values, const std::string& name) {
  return vector_parameter(values, name, 1)[0];
}

}  // namespace chaosweep::models
