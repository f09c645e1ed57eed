// `chaosweep models`: every registered model's parameters (defaults, allowed values, whether a
// sweep or a schedule may set them), state variables and derived observables, as Markdown.
// docs/models.md is this output; a test checks that they agree.
#include <algorithm>
#include <charconv>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "app/commands.hpp"
#include "core/error.hpp"
#include "models/model.hpp"

namespace chaosweep::app {
namespace {

/// Bounds at or beyond these mean "no bound" in ParameterInfo.
constexpr double kUnbounded = 1e300;
constexpr double kTiny = 1e-300;  // a lower bound this small means "above zero"

/// Whole numbers in full (1000000, not 1e+06); others as the shortest text that reads back.
std::string number_text(double v) {
  char buf[32];
  if (v == std::floor(v) && std::abs(v) < 1e15) {
    std::snprintf(buf, sizeof buf, "%.0f", v);
    return buf;
  }
  const auto end = std::to_chars(buf, buf + sizeof buf, v).ptr;
  return std::string(buf, end);
}

std::string value_text(const std::vector<double>& values) {
  std::string text;
  for (const double v : values) text += (text.empty() ? "" : ", ") + number_text(v);
  return values.size() == 1 ? text : "[" + text + "]";
}

std::string allowed_text(const models::ParameterInfo& p) {
  std::string text;
  if (p.min > -kUnbounded && p.max < kUnbounded) {
    text = number_text(p.min) + " to " + number_text(p.max);
  } else if (p.min > 0.0 && p.min <= kTiny) {
    text = "> 0";
  } else if (p.min > -kUnbounded) {
    text = ">= " + number_text(p.min);
  } else if (p.max < kUnbounded) {
    text = "<= " + number_text(p.max);
  } else {
    text = "any";
  }
  if (p.shape == models::ParameterShape::matrix) {
    text = "a square matrix (its rows), each entry " + text;
  } else if (p.shape == models::ParameterShape::list) {
    text = "one component per state variable, each " + text;
  } else if (p.default_value.size() > 1) {
    text = std::to_string(p.default_value.size()) + " components, each " + text;
  }
  return p.integer ? "integer, " + text : text;
}

/// `name` with every run of digits replaced by '#': observables of the same shape (x0, x1, ...)
/// are listed as one run.
std::string shape(const std::string& name) {
  std::string out;
  for (std::size_t i = 0; i < name.size(); ++i) {
    if (std::isdigit(static_cast<unsigned char>(name[i]))) {
      if (out.empty() || out.back() != '#') out += '#';
    } else {
      out += name[i];
    }
  }
  return out;
}

/// One Markdown bullet per observable, or per run of three or more consecutive observables of
/// the same shape (`x0` ... `x39`).
std::string observable_list(const std::vector<models::ObservableInfo>& list) {
  if (list.empty()) return "- none\n";
  std::string text;
  std::size_t i = 0;
  while (i < list.size()) {
    std::size_t j = i + 1;
    while (j < list.size() && shape(list[j].name) == shape(list[i].name) &&
           shape(list[j].long_name) == shape(list[i].long_name)) {
      ++j;
    }
    if (j - i >= 3) {
      text += "- `" + list[i].name + "` ... `" + list[j - 1].name + "` (" +
              std::to_string(j - i) + "): " + list[i].long_name + " ... " +
              list[j - 1].long_name + "\n";
    } else {
      for (std::size_t k = i; k < j; ++k) {
        text += "- `" + list[k].name + "`: " + list[k].long_name + "\n";
      }
    }
    i = j;
  }
  return text;
}

std::string model_section(const models::ModelInfo& info) {
  const models::ParameterValues defaults = models::complete_parameters(info, {});
  const std::unique_ptr<models::Model> model = info.make(defaults);
  std::string text = "## `" + info.name + "`\n\n" + info.description + ".\n\n";
  text += "| parameter | default | allowed values | sweep | schedule | meaning |\n";
  text += "|---|---|---|---|---|---|\n";
  for (const models::ParameterInfo& p : info.parameters) {
    const bool scalar = p.default_value.size() == 1;
    const std::string sweep = p.structural ? "no (sets the state size)"
                              : scalar     ? "yes"
                                           : "no (a vector)";
    const std::string schedule =
        p.structural || !scalar ? "no" : model->parameter_slot(p.name) >= 0 ? "yes" : "no";
    std::string shown = value_text(p.default_value);
    if (p.shape == models::ParameterShape::matrix) {  // row by row
      const std::size_t side = static_cast<std::size_t>(std::lround(std::sqrt(p.default_value.size())));
      shown.clear();
      for (std::size_t r = 0; r < side; ++r) {
        const std::vector<double> row(p.default_value.begin() + static_cast<std::ptrdiff_t>(r * side),
                                      p.default_value.begin() + static_cast<std::ptrdiff_t>((r + 1) * side));
        shown += (shown.empty() ? "" : ", ") + value_text(row);
      }
      shown = "[" + shown + "]";
    }
    text += "| `" + p.name + "` | " + shown + " | " + allowed_text(p) +
            " | " + sweep + " | " + schedule + " | " + p.long_name + " |\n";
  }
  const auto& observables = model->observables();
  const auto first_derived = observables.begin() + model->state_dim();
  text += "\nState variables at the defaults (" + std::to_string(model->state_dim()) + "):\n\n";
  text += observable_list({observables.begin(), first_derived});
  text += "\nDerived observables:\n\n" + observable_list({first_derived, observables.end()});
  text += std::string("\nTangent-linear product (Lyapunov exponents): ") +
          (model->has_tangent() ? "yes" : "no") + ".\n";
  std::string forcings;
  for (const models::AdditiveForcing& f : info.additive_forcings) {
    forcings += (forcings.empty() ? "" : ", ") + ("`" + f.parameter + "`");
  }
  text += "\nAdditive forcings (statistics.response predicts the response to them): " +
          (forcings.empty() ? std::string("none") : forcings) + ".\n";
  return text;
}

}  // namespace

std::string models_reference() {
  std::string text =
      "# Models\n\n"
      "The output of `chaosweep models`, from the models compiled into the program (a test\n"
      "checks that this file matches it). The equations are in [spec.md](spec.md) (\"Models\");\n"
      "`chaosweep check SPEC` prints the values a spec resolves to.\n\n"
      "Units: every model is non-dimensional. Parameters, state variables and observables are\n"
      "in the model's own scale (units `1` in the archive); time is in the model's own time\n"
      "unit, `model_time_unit`, and rates are per that unit, `1/model_time_unit`.\n\n"
      "A parameter that sets the state size (structural) can be neither swept nor scheduled;\n"
      "the state variables and observables listed are those at the default parameters.\n";
  const models::Registry& registry = models::Registry::instance();
  for (const std::string& name : registry.names()) {
    text += "\n" + model_section(*registry.find(name));
  }
  return text;
}

int models_command() {
  std::fputs(models_reference().c_str(), stdout);
  return kExitComplete;
}

}  // namespace chaosweep::app
