// The model registry and parameter completion. Pure: no I/O.
#include <stdexcept>
#include <utility>

#include "models/model.hpp"

namespace chaosweep::models {

Registry& Registry::instance() {
  // Function-local static: constructed on first use, so every model file's static Registrar
  // can call it regardless of the order in which translation units are initialised.
  static Registry registry;
  return registry;
}

void Registry::add(ModelInfo info) {
  if (info.name.empty() || !info.make || !info.state_dim) {
    throw std::logic_error("model registration needs a name, a factory and a state_dim function");
  }
  const std::string name = info.name;
  if (!models_.emplace(name, std::move(info)).second) {
    throw std::logic_error("model '" + name + "' is registered twice");
  }
}

const ModelInfo* Registry::find(const std::string& name) const {
  const auto it = models_.find(name);
  return it == models_.end() ? nullptr : &it->second;
}

std::vector<std::string> Registry::names() const {
  std::vector<std::string> out;
  out.reserve(models_.size());
  for (const auto& entry : models_) out.push_back(entry.first);  // std::map: already sorted
  return out;
}

ParameterValues complete_parameters(const ModelInfo& info, const ParameterValues& overrides) {
  ParameterValues values;
  for (const ParameterInfo& p : info.parameters) values[p.name] = p.default_value;
  for (const auto& [name, value] : overrides) {
    if (values.count(name) == 0) {
      throw std::invalid_argument("model '" + info.name + "' has no parameter '" + name + "'.");
    }
    values[name] = value;
  }
  return values;
}

}  // namespace chaosweep::models
