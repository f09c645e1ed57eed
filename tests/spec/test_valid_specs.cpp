// Valid fixtures parse to the values written in them, with every default filled in.
// Expected values are read off the fixture files (tests/fixtures/specs/valid/); defaults are
// those of the public spec contract (README, "The campaign spec").
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/sha256.hpp"
#include "models/model.hpp"
#include "spec/load.hpp"

namespace {

using namespace chaosweep::spec;

std::string valid(const std::string& name) {
  return std::string(CHAOSWEEP_FIXTURES) + "/specs/valid/" + name;
}

std::string file_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

TEST(ValidSpec, Lorenz63SweepValues) {
  const std::string path = valid("lorenz63_sweep.yaml");
  const Spec s = load_spec(path);
  EXPECT_EQ(s.source_path, path);
  EXPECT_EQ(s.text, file_bytes(path));
  EXPECT_EQ(s.sha256, chaosweep::sha256_hex(s.text));
  EXPECT_EQ(s.name, "thermosyphon-bias-sweep");
  EXPECT_EQ(s.description, "forcing along x from 0 to 8");
  EXPECT_EQ(s.model, "lorenz63");

  // Overrides as written; forcing keeps its registry default (0) as the base value.
  ASSERT_EQ(s.parameters.size(), 5u);
  EXPECT_EQ(s.parameters.at("sigma"), std::vector<double>{10.0});
  EXPECT_EQ(s.parameters.at("rho"), std::vector<double>{28.0});
  EXPECT_EQ(s.parameters.at("beta"), std::vector<double>{2.6666666666666667});
  EXPECT_EQ(s.parameters.at("forcing"), std::vector<double>{0.0});
  EXPECT_EQ(s.parameters.at("forcing_direction"), (std::vector<double>{1.0, 0.0, 0.0}));

  // exact: range {start 0, stop 8, count 17} is inclusive, spacing 8/16 = 0.5; every value
  // i/2 is a dyadic rational, so it is represented exactly.
  ASSERT_EQ(s.sweep.size(), 1u);
  EXPECT_EQ(s.sweep[0].parameter, "forcing");
  ASSERT_EQ(s.sweep[0].values.size(), 17u);
  for (int i = 0; i < 17; ++i) EXPECT_EQ(s.sweep[0].values[i], 0.5 * i) << i;
  EXPECT_EQ(s.sweep[0].where.line, 7);

  EXPECT_EQ(s.ensemble.members, 512);
  EXPECT_EQ(s.ensemble.initial.kind, InitialKind::given);
  EXPECT_EQ(s.ensemble.initial.state, (std::vector<double>{1.0, 1.0, 20.0}));
  EXPECT_EQ(s.ensemble.perturbation.distribution, Distribution::gaussian);
  EXPECT_EQ(s.ensemble.perturbation.scale, 1.0e-3);
  EXPECT_EQ(s.ensemble.seed, 20261202u);

  EXPECT_EQ(s.integration.method, "rk4");
  EXPECT_EQ(s.integration.dt, 0.005);
  EXPECT_EQ(s.integration.spinup, 50.0);
  EXPECT_EQ(s.integration.duration, 1000.0);

  EXPECT_EQ(s.statistics.observables, (std::vector<std::string>{"x", "y", "z"}));
  EXPECT_EQ(s.statistics.regimes.kind, RegimeKind::sign);
  EXPECT_EQ(s.statistics.regimes.observable, "x");
  EXPECT_EQ(s.statistics.regimes.labels,
            (std::vector<std::string>{"counterclockwise", "clockwise"}));
  EXPECT_TRUE(s.statistics.histogram.enabled);
  EXPECT_EQ(s.statistics.histogram.observable, "x");
  EXPECT_EQ(s.statistics.histogram.bins, 80);
  EXPECT_EQ(s.statistics.histogram.low, -25.0);
  EXPECT_EQ(s.statistics.histogram.high, 25.0);

  EXPECT_EQ(s.output.archive, "results/thermosyphon.h5");
  EXPECT_EQ(s.output.archive_where.line, 19);
  EXPECT_EQ(s.output.archive_where.column, 12);
  EXPECT_EQ(s.output.trajectories.members, 4);
  EXPECT_EQ(s.output.trajectories.every, 0.05);
  EXPECT_EQ(s.run.batch_size, 64);
}

TEST(ValidSpec, Lorenz96Defaults) {
  const Spec s = load_spec(valid("lorenz96_defaults.yaml"));
  EXPECT_EQ(s.name, "l96-forcing");
  EXPECT_EQ(s.description, "");
  EXPECT_EQ(s.model, "lorenz96");
  EXPECT_EQ(s.parameters.at("n"), std::vector<double>{8.0});
  EXPECT_EQ(s.parameters.at("F"), std::vector<double>{8.0});  // registry default
  ASSERT_EQ(s.sweep.size(), 1u);
  EXPECT_EQ(s.sweep[0].parameter, "F");
  EXPECT_EQ(s.sweep[0].values, (std::vector<double>{6.0, 8.0, 10.0}));

  // Defaults of the spec contract.
  EXPECT_EQ(s.ensemble.members, 16);
  EXPECT_EQ(s.ensemble.seed, 0u);
  EXPECT_EQ(s.ensemble.initial.kind, InitialKind::attractor);
  EXPECT_EQ(s.ensemble.initial.spinup, 50.0);
  EXPECT_EQ(s.ensemble.perturbation.distribution, Distribution::gaussian);
  EXPECT_EQ(s.ensemble.perturbation.scale, 1e-3);
  EXPECT_EQ(s.integration.method, "rk4");
  EXPECT_EQ(s.integration.spinup, 0.0);
  EXPECT_EQ(s.statistics.regimes.kind, RegimeKind::none);
  EXPECT_FALSE(s.statistics.histogram.enabled);
  EXPECT_EQ(s.output.trajectories.members, 0);
  EXPECT_EQ(s.run.batch_size, 64);

  // Default observables: every observable of the model, in its order (state variables
  // x0..x7, then site_mean and energy, per the lorenz96 contract).
  const std::vector<std::string> expected = {"x0", "x1", "x2", "x3", "x4",
                                             "x5", "x6", "x7", "site_mean", "energy"};
  EXPECT_EQ(s.statistics.observables, expected);
}

TEST(ValidSpec, Lorenz63NearestRegimes) {
  const Spec s = load_spec(valid("lorenz63_nearest.yaml"));
  EXPECT_EQ(s.description, "Two regimes, one around each fixed point C+ and C-.\n");
  EXPECT_EQ(s.parameters.at("forcing_direction"), (std::vector<double>{0.0, 1.0, 0.0}));
  ASSERT_EQ(s.sweep.size(), 2u);
  EXPECT_EQ(s.sweep[0].parameter, "rho");
  EXPECT_EQ(s.sweep[0].values, (std::vector<double>{24.0, 28.0, 32.0}));
  EXPECT_EQ(s.sweep[1].parameter, "forcing");
  EXPECT_EQ(s.sweep[1].values, (std::vector<double>{-1.5, 0.0, 1.5}));
  EXPECT_EQ(s.ensemble.initial.kind, InitialKind::attractor);
  EXPECT_EQ(s.ensemble.initial.spinup, 20.0);
  EXPECT_EQ(s.ensemble.perturbation.distribution, Distribution::uniform);
  EXPECT_EQ(s.ensemble.perturbation.scale, 0.5);
  EXPECT_EQ(s.ensemble.seed, 18446744073709551615u);  // largest uint64 seed
  EXPECT_EQ(s.integration.spinup, 10.0);

  const Regimes& r = s.statistics.regimes;
  EXPECT_EQ(r.kind, RegimeKind::nearest);
  EXPECT_EQ(r.coordinates, (std::vector<std::string>{"x", "y", "z"}));  // default: the state
  ASSERT_EQ(r.centroids.size(), 2u);
  // exact: C+- = (+-sqrt(beta (rho - 1)), +-sqrt(beta (rho - 1)), rho - 1) with beta 8/3,
  // rho 28 (Lorenz 1963); the fixture writes sqrt(72) to 15 significant digits.
  EXPECT_NEAR(r.centroids[0][0], std::sqrt(72.0), 1e-13);
  EXPECT_NEAR(r.centroids[1][1], -std::sqrt(72.0), 1e-13);
  EXPECT_EQ(r.centroids[0][2], 27.0);
  EXPECT_EQ(r.labels, (std::vector<std::string>{"regime0", "regime1"}));
  EXPECT_EQ(s.output.trajectories.members, 0);
  EXPECT_EQ(s.run.batch_size, 128);
}

TEST(ValidSpec, Lorenz96RegimesInDerivedObservables) {
  const Spec s = load_spec(valid("lorenz96_observable_regimes.yaml"));
  EXPECT_EQ(s.parameters.at("n"), std::vector<double>{40.0});  // registry default
  EXPECT_TRUE(s.sweep.empty());
  EXPECT_EQ(s.ensemble.initial.kind, InitialKind::attractor);
  EXPECT_EQ(s.ensemble.initial.spinup, 50.0);
  EXPECT_EQ(s.statistics.observables, (std::vector<std::string>{"site_mean", "energy", "x0"}));
  const Regimes& r = s.statistics.regimes;
  EXPECT_EQ(r.kind, RegimeKind::nearest);
  EXPECT_EQ(r.coordinates, (std::vector<std::string>{"site_mean", "energy"}));
  ASSERT_EQ(r.centroids.size(), 3u);
  EXPECT_EQ(r.centroids[2], (std::vector<double>{3.0, 500.0}));
  EXPECT_EQ(r.labels, (std::vector<std::string>{"low", "middle", "high"}));
  EXPECT_EQ(s.statistics.histogram.observable, "energy");
  EXPECT_EQ(s.statistics.histogram.bins, 1);
  EXPECT_EQ(s.output.archive, "out dir/l96 energy.h5");
}

// statistics.lyapunov as written; the two-scale model's state is K slow + K*J fast variables
// (8 + 32 = 40), so 5 exponents are within range.
TEST(ValidSpec, TwoScaleLyapunov) {
  const Spec s = load_spec(valid("lorenz96_two_scale_lyapunov.yaml"));
  EXPECT_EQ(s.model, "lorenz96-two-scale");
  EXPECT_EQ(s.parameters.at("K"), std::vector<double>{8.0});
  EXPECT_EQ(s.parameters.at("J"), std::vector<double>{4.0});
  EXPECT_EQ(s.parameters.at("F"), std::vector<double>{10.0});  // registry default
  EXPECT_TRUE(s.statistics.lyapunov.enabled);
  EXPECT_EQ(s.statistics.lyapunov.exponents, 5);
  EXPECT_EQ(s.statistics.lyapunov.renormalise_every, 0.05);
  EXPECT_EQ(s.statistics.observables, (std::vector<std::string>{"x0", "site_mean", "energy"}));
  // Without the section the exponents are off.
  EXPECT_FALSE(load_spec(valid("lorenz96_defaults.yaml")).statistics.lyapunov.enabled);
}

// statistics.twins as written; `every` is accepted as a whole number of steps of dt up to the
// rounding of the decimal values (0.07 / 0.01 = 7.000000000000001 in binary floating point).
TEST(ValidSpec, Lorenz96Twins) {
  const Spec s = load_spec(valid("lorenz96_twins.yaml"));
  EXPECT_TRUE(s.statistics.twins.enabled);
  EXPECT_EQ(s.statistics.twins.scale, 1.0e-6);
  EXPECT_EQ(s.statistics.twins.every, 0.07);
  EXPECT_EQ(s.statistics.twins.threshold, 0.4);
  EXPECT_NE(0.07 / 0.01, 7.0);  // the case the rounding tolerance is for
  // Without the section there are no twins.
  EXPECT_FALSE(load_spec(valid("lorenz96_defaults.yaml")).statistics.twins.enabled);
}

// A schedule beside lyapunov, twins and snapshots: every section read as written.
TEST(ValidSpec, ScheduleWithLyapunovAndTwins) {
  const Spec s = load_spec(valid("lorenz63_ramp_twins_lyapunov.yaml"));
  EXPECT_EQ(s.schedule.kind, ScheduleKind::ramp);
  EXPECT_EQ(s.schedule.parameter, "forcing");
  EXPECT_EQ(s.schedule.to, 4.0);
  EXPECT_EQ(s.schedule.end, 10.0);
  EXPECT_TRUE(s.statistics.lyapunov.enabled);
  EXPECT_EQ(s.statistics.lyapunov.exponents, 2);
  EXPECT_EQ(s.statistics.lyapunov.renormalise_every, 0.5);
  EXPECT_TRUE(s.statistics.twins.enabled);
  EXPECT_EQ(s.statistics.twins.every, 0.1);
  EXPECT_TRUE(s.statistics.snapshots.enabled);
}

// Every valid fixture loads (so a fixture added later is at least parsed).
// schedule and statistics.snapshots as written: a periodic forcing offset by the sweep of the
// same parameter (phase defaults to 0), and a step without a sweep (no offset).
TEST(ValidSpec, SchedulesAndSnapshots) {
  const Spec s = load_spec(valid("lorenz63_periodic_schedule.yaml"));
  EXPECT_EQ(s.schedule.kind, ScheduleKind::periodic);
  EXPECT_EQ(s.schedule.parameter, "forcing");
  EXPECT_EQ(s.schedule.mean, 1.0);
  EXPECT_EQ(s.schedule.amplitude, 0.5);
  EXPECT_EQ(s.schedule.period, 10.0);
  EXPECT_EQ(s.schedule.phase, 0.0);
  EXPECT_TRUE(s.schedule.offset_by_sweep);
  EXPECT_EQ(s.schedule.where.line, 9);
  EXPECT_TRUE(s.statistics.snapshots.enabled);
  EXPECT_EQ(s.statistics.snapshots.every, 0.5);
  const Spec step = load_spec(valid("lorenz96_step_schedule.yaml"));
  EXPECT_EQ(step.schedule.kind, ScheduleKind::step);
  EXPECT_EQ(step.schedule.parameter, "F");
  EXPECT_EQ(step.schedule.before, 8.0);
  EXPECT_EQ(step.schedule.after, 9.5);
  EXPECT_EQ(step.schedule.at, 30.0);
  EXPECT_FALSE(step.schedule.offset_by_sweep);
  EXPECT_FALSE(step.statistics.snapshots.enabled);
  // without a schedule the kind is none (every parameter constant in time)
  EXPECT_EQ(load_spec(valid("lorenz96_defaults.yaml")).schedule.kind, ScheduleKind::none);
}

TEST(ValidSpec, EveryValidFixtureLoads) {
  int count = 0;
  for (const auto& entry :
       std::filesystem::directory_iterator(std::string(CHAOSWEEP_FIXTURES) + "/specs/valid")) {
    if (entry.path().extension() != ".yaml") continue;
    EXPECT_NO_THROW(load_spec(entry.path().string())) << entry.path();
    ++count;
  }
  EXPECT_GE(count, 4);
}

}  // namespace
