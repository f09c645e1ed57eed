// File handling, range axes, per-case model checks and size guards of the spec loader.
#include <gtest/gtest.h>

#include <fstream>
#include <memory>
#include <stdexcept>
#include <string>

#include "core/error.hpp"
#include "models/model.hpp"
#include "spec/load.hpp"

namespace {

using chaosweep::SpecError;
using chaosweep::UsageError;
using chaosweep::spec::load_spec;
using chaosweep::spec::parse_spec;
using chaosweep::spec::Spec;

/// A minimal lorenz63 spec with `extra` appended (top-level sections) and `integration`
/// replacing the integration section.
std::string spec_text(const std::string& extra,
                      const std::string& integration = "integration: {dt: 0.01, duration: 10}\n",
                      const std::string& ensemble = "ensemble: {members: 4, seed: 1}\n") {
  return "campaign: {name: inline}\nmodel: {name: lorenz63}\n" + ensemble + integration +
         "output: {archive: out.h5}\n" + extra;
}

/// The SpecError message of parsing `text` as "inline.yaml" ("" when it parses).
std::string error_of(const std::string& text) {
  try {
    parse_spec(text, "inline.yaml");
  } catch (const SpecError& e) {
    return e.what();
  }
  return "";
}

TEST(LoadFile, MissingFileIsAUsageErrorWithoutAPosition) {
  const std::string path = "/nonexistent/chaosweep/spec.yaml";
  try {
    load_spec(path);
    FAIL() << "no error";
  } catch (const UsageError& e) {
    EXPECT_EQ(std::string(e.what()), "cannot read spec " + path + ": No such file or directory");
    EXPECT_EQ(e.exit_code(), chaosweep::kExitInvalid);
  }
}

TEST(LoadFile, DirectoryIsAUsageError) {
  try {
    load_spec(CHAOSWEEP_FIXTURES);
    FAIL() << "no error";
  } catch (const UsageError& e) {
    EXPECT_EQ(std::string(e.what()),
              "cannot read spec " + std::string(CHAOSWEEP_FIXTURES) + ": Is a directory");
  }
}

/// Writes `bytes` to a fresh file in the test's temporary directory; returns its path.
std::string temporary_file(const std::string& name, const std::string& bytes) {
  const std::string path = ::testing::TempDir() + name;
  std::ofstream(path, std::ios::binary) << bytes;
  return path;
}

/// The UsageError message of loading `path` ("" when it loads or fails otherwise).
std::string usage_error_of(const std::string& path) {
  try {
    load_spec(path);
  } catch (const UsageError& e) {
    return e.what();
  }
  return "";
}

// The HDF5 file format specification (superblock): the format signature is the 8 bytes
// \211 H D F \r \n \032 \n, at byte 0 or, after a user block, at byte 512, 1024, 2048, ...
// (Real archives and h5py files are checked in tests/e2e/cli_contract.sh.)
TEST(LoadFile, HdfFileIsNamedAsSuch) {
  const std::string signature("\x89HDF\r\n\x1a\n", 8);
  const std::string at_zero = temporary_file("at-zero.h5", signature + std::string(100, '\t'));
  EXPECT_EQ(usage_error_of(at_zero), at_zero + " is an HDF5 file, not a campaign spec (YAML text)");
  std::string block = "chaosweep archive\nformat 2\n";
  block.resize(1024, '\0');
  const std::string after_block = temporary_file("after-block.h5", block + signature);
  EXPECT_EQ(usage_error_of(after_block).rfind(after_block + " is a chaosweep archive (HDF5)", 0), 0u)
      << usage_error_of(after_block);
}

TEST(LoadFile, BinaryFileIsNotText) {
  const std::string path = temporary_file("binary.yaml", std::string("campaign:\0\1", 11));
  EXPECT_EQ(usage_error_of(path),
            path + " is not a text file (a NUL byte at offset 9); a campaign spec is YAML text");
}

TEST(LoadFile, ParseUsesTheSourceNameAndKeepsTheTextVerbatim) {
  const std::string text = spec_text("");
  const Spec s = parse_spec(text, "given-name.yaml");
  EXPECT_EQ(s.source_path, "given-name.yaml");
  EXPECT_EQ(s.text, text);
  EXPECT_EQ(s.output.archive_where.line, 5);
  EXPECT_EQ(s.output.archive_where.column, 19);
}

TEST(LoadFile, WindowsLineEndingsParse) {
  std::string text = spec_text("run: {batch_size: 16}\n");
  for (std::size_t i = text.find('\n'); i != std::string::npos; i = text.find('\n', i + 2)) {
    text.insert(i, "\r");
  }
  const Spec s = parse_spec(text, "crlf.yaml");
  EXPECT_EQ(s.text, text);
  EXPECT_EQ(s.run.batch_size, 16);
}

TEST(LoadFile, TabsOutsideIndentationAreFine) {
  const Spec s = parse_spec(spec_text("# a comment\twith a tab\n\t# an indented comment\n"),
                            "tabs.yaml");
  EXPECT_EQ(s.name, "inline");
  EXPECT_EQ(parse_spec("campaign: {name: \"a\tb\"}\nmodel: {name: lorenz63}\n"
                       "ensemble: {members: 4, seed: 1}\n"
                       "integration: {dt: 0.01, duration: 10}\noutput: {archive: o.h5}\n",
                       "quoted-tab.yaml")
                .name,
            "a\tb");
}

// exact: v_i = (1 * i) / 10 is one correctly rounded division, the same double as the
// literal i/10 (where repeated addition of 0.1 would drift, e.g. 0.30000000000000004).
TEST(RangeAxis, InclusiveCorrectlyRoundedValues) {
  const Spec s = parse_spec(
      spec_text("sweep:\n  - {parameter: forcing, range: {start: 0, stop: 1, count: 11}}\n"),
      "range.yaml");
  ASSERT_EQ(s.sweep[0].values.size(), 11u);
  for (int i = 0; i <= 10; ++i) EXPECT_EQ(s.sweep[0].values[i], i / 10.0) << i;
}

TEST(RangeAxis, DescendingAndSingleValue) {
  const Spec s = parse_spec(
      spec_text("sweep:\n  - {parameter: forcing, range: {start: 2, stop: -2, count: 5}}\n"
                "  - {parameter: rho, range: {start: 28, stop: 28, count: 1}}\n"),
      "range.yaml");
  EXPECT_EQ(s.sweep[0].values, (std::vector<double>{2, 1, 0, -1, -2}));
  EXPECT_EQ(s.sweep[1].values, std::vector<double>{28});
}

TEST(SweepChecks, StableStepIsCheckedAtEverySweptValue) {
  // dt 0.05 is within lorenz63's stable range at rho 28 but not at rho 300, where the
  // model's own estimate is smaller; the message names the value that limits it.
  const std::string msg = error_of(
      spec_text("sweep:\n  - {parameter: rho, values: [28, 300]}\n",
                "integration: {dt: 0.05, duration: 10}\n"));
  EXPECT_EQ(msg.rfind("inline.yaml:4:19: integration.dt: 0.05 is outside RK4's stable range", 0),
            0u)
      << msg;
  EXPECT_NE(msg.find("with rho = 300"), std::string::npos) << msg;
}

TEST(SweepChecks, SweptValuesRespectParameterBounds) {
  const std::string msg =
      error_of(spec_text("sweep:\n  - {parameter: rho, range: {start: -10, stop: 10, count: 3}}\n"));
  EXPECT_EQ(msg.rfind("inline.yaml:7:37: sweep[0].range.start: `rho` must be at least 0, got -10", 0),
            0u)
      << msg;
}

TEST(SizeGuards, MembersTimesCasesMustFitInt64) {
  // 10^9 members x (10^4)^3 cases = 10^21 > 2^63 - 1 (about 9.2e18).
  const std::string axes =
      "sweep:\n"
      "  - {parameter: rho, range: {start: 1, stop: 100, count: 10000}}\n"
      "  - {parameter: sigma, range: {start: 1, stop: 100, count: 10000}}\n"
      "  - {parameter: forcing, range: {start: -1, stop: 1, count: 10000}}\n";
  const std::string msg = error_of(spec_text(
      axes, "integration: {dt: 0.001, duration: 1}\n",
      "ensemble: {members: 1000000000, seed: 1}\n"));
  EXPECT_EQ(msg.rfind("inline.yaml:3:21: ensemble.members: ", 0), 0u) << msg;
  EXPECT_NE(msg.find("more than a 64-bit count holds"), std::string::npos) << msg;
}

// --- A test-only model whose factory refuses some parameter combinations, to exercise the
// loader's handling of std::invalid_argument from ModelInfo::make (the real models accept
// every combination within their bounds). It is registered in this test program only.

class CoupledTestModel final : public chaosweep::models::Model {
 public:
  int state_dim() const override { return 1; }
  const std::vector<chaosweep::models::ObservableInfo>& observables() const override {
    static const std::vector<chaosweep::models::ObservableInfo> obs = {{"u", "test variable"}};
    return obs;
  }
  void rhs(const double* x, double* dxdt, int width) const override {
    for (int m = 0; m < width; ++m) dxdt[m] = -x[m];
  }
  double max_stable_dt() const override { return 1.0; }
  std::vector<double> default_initial_state() const override { return {1.0}; }
};

chaosweep::models::ModelInfo coupled_info() {
  chaosweep::models::ModelInfo info;
  info.name = "spec-test-coupled";
  info.description = "test-only: a + b must not exceed 1";
  info.parameters = {{"a", {0.25}, 0.0, 1.0, false, false, "first share"},
                     {"b", {0.25}, 0.0, 1.0, false, false, "second share"}};
  info.make = [](const chaosweep::models::ParameterValues& v)
      -> std::unique_ptr<chaosweep::models::Model> {
    if (v.at("a")[0] + v.at("b")[0] > 1.0) throw std::invalid_argument("a + b exceeds 1.");
    return std::make_unique<CoupledTestModel>();
  };
  info.state_dim = [](const chaosweep::models::ParameterValues&) { return 1; };
  return info;
}

const chaosweep::models::Registrar coupled_registrar(coupled_info());

std::string coupled_spec(const std::string& model) {
  return "campaign: {name: coupled}\n" + model +
         "ensemble: {members: 4, seed: 1}\nintegration: {dt: 0.01, duration: 1}\n"
         "output: {archive: out.h5}\n";
}

TEST(ModelFactory, InconsistentParametersAreASpecErrorAtModelParameters) {
  const std::string msg = error_of(
      coupled_spec("model:\n  name: spec-test-coupled\n  parameters: {a: 0.75, b: 0.5}\n"));
  EXPECT_EQ(msg,
            "inline.yaml:4:15: model.parameters: spec-test-coupled cannot be built with these "
            "parameters: a + b exceeds 1.");
}

TEST(ModelFactory, InconsistentSweptValueIsASpecErrorAtTheValue) {
  const std::string msg = error_of(coupled_spec(
      "model: {name: spec-test-coupled, parameters: {a: 0.5}}\n"
      "sweep:\n  - {parameter: b, values: [0.1, 0.5, 0.75]}\n"));
  EXPECT_EQ(msg,
            "inline.yaml:4:39: sweep[0].values[2]: spec-test-coupled cannot be built with "
            "b = 0.75: a + b exceeds 1.");
}

}  // namespace
