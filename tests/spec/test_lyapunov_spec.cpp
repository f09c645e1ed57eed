// statistics.lyapunov needs a model with a tangent-linear product. Every model compiled into
// the program has one, so this test registers a model of its own without one.
#include <gtest/gtest.h>

#include <memory>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "models/model.hpp"
#include "spec/load.hpp"

namespace {

using namespace chaosweep;

/// dx/dt = -x, with no tangent().
class Decay final : public models::Model {
 public:
  int state_dim() const override { return 2; }
  const std::vector<models::ObservableInfo>& observables() const override {
    static const std::vector<models::ObservableInfo> obs = {{"u", "first"}, {"w", "second"}};
    return obs;
  }
  void rhs(const double* x, double* dxdt, int width) const override {
    for (int i = 0; i < 2 * width; ++i) dxdt[i] = -x[i];
  }
  double max_stable_dt() const override { return 1.0; }
  std::vector<double> default_initial_state() const override { return {1.0, 1.0}; }
};

models::ModelInfo decay_info() {
  models::ModelInfo info;
  info.name = "test-decay-without-tangent";
  info.description = "linear decay, test only";
  info.make = [](const models::ParameterValues&) -> std::unique_ptr<models::Model> {
    return std::make_unique<Decay>();
  };
  info.state_dim = [](const models::ParameterValues&) { return 2; };
  return info;
}

const models::Registrar registrar(decay_info());

std::string spec_text(const std::string& model, const std::string& lyapunov) {
  return "campaign: {name: t}\n"
         "model: {name: " + model + "}\n"
         "ensemble: {members: 2, seed: 1}\n"
         "integration: {dt: 0.01, duration: 1}\n"
         "statistics:\n"
         "  lyapunov: " + lyapunov + "\n"
         "output: {archive: out.h5}\n";
}

TEST(LyapunovSpec, RefusedForAModelWithoutTangent) {
  try {
    spec::parse_spec(spec_text("test-decay-without-tangent", "{exponents: 1, renormalise_every: 1}"),
                     "t.yaml");
    FAIL() << "accepted";
  } catch (const SpecError& e) {
    const std::string m = e.what();
    EXPECT_EQ(m.rfind("t.yaml:6:13: ", 0), 0u) << m;
    EXPECT_NE(m.find("test-decay-without-tangent has no tangent-linear product"), std::string::npos)
        << m;
  }
}

TEST(LyapunovSpec, AcceptedForAModelWithTangent) {
  const spec::Spec s =
      spec::parse_spec(spec_text("lorenz63", "{exponents: 3, renormalise_every: 0.01}"), "t.yaml");
  EXPECT_TRUE(s.statistics.lyapunov.enabled);
  EXPECT_EQ(s.statistics.lyapunov.exponents, 3);
  EXPECT_EQ(s.statistics.lyapunov.renormalise_every, 0.01);
}

TEST(LyapunovSpec, UnknownKeyAndNonPositiveInterval) {
  EXPECT_THROW(spec::parse_spec(spec_text("lorenz63", "{exponents: 1, renormalize_every: 1}"),
                                "t.yaml"),
               SpecError);
  EXPECT_THROW(spec::parse_spec(spec_text("lorenz63", "{exponents: 1, renormalise_every: 0}"),
                                "t.yaml"),
               SpecError);
  EXPECT_THROW(spec::parse_spec(spec_text("lorenz63", "{exponents: 1.5, renormalise_every: 1}"),
                                "t.yaml"),
               SpecError);
}

}  // namespace
