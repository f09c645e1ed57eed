// chaosweep-bench: member-steps per second per core of the production batch kernel and of the
// scalar reference integrator, measured side by side in one run, for forced Lorenz-63 and
// Lorenz-96 (n 40) with time moments and sign regimes on (and with a histogram on as well),
// the rate at several batch widths, the cost of twins, the response sums, schedules, noise and
// Lyapunov exponents, every model against every feature with its counted flops (the matrix),
// and the core's FMA throughput for scale.
//
//   chaosweep-bench [--model lorenz63|lorenz84|lorenz96|lorenz96-two-scale|all] [--members N] [--steps S]
//                   [--widths 16,32,64,...] [--repeats R] [--sections main,noise,...] [--json]
//
// Every rate is the median of R repetitions (minimum and maximum shown) of CPU time of the
// benchmark's thread, so other processes on a busy machine do not count against it.
#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "campaigns.hpp"
#include "core/error.hpp"
#include "measure.hpp"
#include "models/model.hpp"
#include "peak.hpp"

namespace chaosweep::bench {
namespace {

struct Options {
  std::string model = "all";
  long members = 2048;
  long steps = 4000;
  std::vector<int> widths = {16, 32, 64, 128, 256};
  int width = 64;
  int repeats = 5;
  long scalar_members = 64;
  std::vector<std::string> sections = {"main",  "widths",   "twins",  "response",
                                       "schedule", "noise", "lyapunov", "matrix"};
  bool json = false;
  bool runs(const std::string& section) const {
    return std::find(sections.begin(), sections.end(), section) != sections.end();
  }
};

/// One line of results.
struct Row {
  std::string model, statistics;
  int width = 0;
  double flops = 0.0;  // per member-step, counted
  Summary production, scalar;
};

std::string first_line_of(const std::string& path, const std::string& key) {
  std::ifstream in(path);
  std::string line;
  while (std::getline(in, line)) {
    if (key.empty() || line.rfind(key, 0) == 0) {
      const auto colon = line.find(':');
      return key.empty() || colon == std::string::npos ? line : line.substr(colon + 2);
    }
  }
  return "unknown";
}

Summary repeat(int n, const std::function<double()>& f) {
  std::vector<double> v;
  for (int i = 0; i < n; ++i) v.push_back(f());
  return summarise(v);
}

/// Members of a measurement of `model`: o.members, an eighth for the two-scale ring (396
/// variables: about as long as the others), at least one batch.
long members_of(const Options& o, const std::string& model) {
  return model == kTwoScale ? std::max<long>(o.members / 8, o.width) : o.members;
}

Row measure(const Options& o, const std::string& model, bool histogram, int width, bool scalar) {
  const spec::Spec s = bench_campaign(model, members_of(o, model), width, 0, o.steps, histogram);
  Row row{model, histogram ? "moments+regimes+histogram" : "moments+regimes", width,
          flops_per_member_step(s), {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  if (scalar) {
    const spec::Spec small = bench_campaign(model, o.scalar_members, width, 0, o.steps, histogram);
    row.scalar = repeat(o.repeats, [&] { return scalar_rate(small, o.scalar_members); });
  }
  return row;
}

/// The production kernel (moments+regimes) with twins sampled every `every_steps` steps
/// (statistics.twins; every_steps 0: no twins). The rate counts the members' steps only, so
/// its ratio to the run without twins is the cost of the twins.
Row measure_twins(const Options& o, const std::string& model, int every_steps) {
  spec::Spec s = bench_campaign(model, o.members, o.width, 0, o.steps, false);
  if (every_steps > 0) {
    s.statistics.twins = {true, 1e-8, every_steps * s.integration.dt, 0.5};
  }
  Row row{model, every_steps > 0 ? "twins every " + std::to_string(every_steps) + " steps"
                                 : "no twins",
          o.width, 0.0, {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  return row;
}

/// The production path (moments+regimes) with the first k Lyapunov exponents (statistics.lyapunov,
/// renormalised every 0.5 time units), or without (k 0): the ratio of the rates is the cost,
/// and rate x k the tangent-vector steps per second.
Row measure_lyapunov(const Options& o, const std::string& model, int k) {
  spec::Spec s = bench_campaign(model, o.members, o.width, 0, o.steps, false);
  if (k > 0) s.statistics.lyapunov = {true, k, 0.5};
  Row row{model, k > 0 ? "lyapunov " + std::to_string(k) + " exponents" : "no lyapunov", o.width,
          0.0, {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  return row;
}

/// The production kernel (moments+regimes) with the response sums (statistics.response) sampled
/// every 0.05 time units with lags to 4, or without (`on` false): their ratio is the cost.
Row measure_response(const Options& o, const std::string& model, bool on) {
  spec::Spec s = bench_campaign(model, o.members, o.width, 0, o.steps, false);
  if (on) s.statistics.response = {true, 4.0, 0.05, 8};
  Row row{model, on ? "response every 0.05, lags to 4" : "no response", o.width, 0.0, {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  return row;
}

/// `s` with its model's forcing on a ramp over the run, from its constant value up by 2.
void add_ramp(spec::Spec& s, const std::string& model, long steps) {
  s.schedule.kind = spec::ScheduleKind::ramp;
  s.schedule.parameter = model == "lorenz63" ? "forcing" : "F";
  s.schedule.from = s.parameters.at(s.schedule.parameter)[0];
  s.schedule.to = s.schedule.from + 2.0;
  s.schedule.start = 0.0;
  s.schedule.end = static_cast<double>(steps) * s.integration.dt;
}

/// `s` under stochastic forcing of `kind` (additive, multiplicative or red with correlation
/// time 0.1, one realisation per member or shared) on every state variable, or with
/// `first_only` on the first one alone, integrated by `method`; returns the row's label.
std::string add_noise(spec::Spec& s, const std::string& model, const std::string& method,
                      spec::NoiseKind kind, bool shared, bool first_only) {
  s.integration.method = method;
  std::string label = method;
  if (kind == spec::NoiseKind::none) return label;
  const bool l63 = model == "lorenz63";
  s.noise.kind = kind;
  s.noise.amplitude = kind == spec::NoiseKind::multiplicative ? 0.1 : (l63 ? 1.0 : 0.5);
  if (kind == spec::NoiseKind::red) s.noise.correlation_time = 0.1;
  s.noise.shared = shared;
  const auto info = models::Registry::instance().find(model);
  const auto names = info->make(s.parameters)->observables();
  const int dim = first_only ? 1 : info->make(s.parameters)->state_dim();
  for (int i = 0; i < dim; ++i) {
    s.noise.variables.push_back(i);
    s.noise.variable_names.push_back(names[static_cast<std::size_t>(i)].name);
  }
  label += std::string(" ") + spec::noise_kind_name(kind) + (shared ? " shared" : " per-member");
  if (first_only) label += " (" + s.noise.variable_names.front() + " only)";
  return label;
}

/// The production kernel (moments+regimes) with the model's forcing on a ramp (schedule), or
/// constant (`on` false): their ratio is the cost of the time-dependent forcing.
Row measure_schedule(const Options& o, const std::string& model, bool on) {
  spec::Spec s = bench_campaign(model, o.members, o.width, 0, o.steps, false);
  if (on) add_ramp(s, model, o.steps);
  Row row{model, on ? "ramp schedule" : "constant forcing", o.width, 0.0, {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  return row;
}

/// The production kernel (moments+regimes) under stochastic forcing (add_noise), or the
/// deterministic RK4 run (`method` "rk4", kind none) that the noisy rates are compared with.
Row measure_noise(const Options& o, const std::string& model, const std::string& method,
                  spec::NoiseKind kind, bool shared, bool first_only = false) {
  spec::Spec s = bench_campaign(model, o.members, o.width, 0, o.steps, false);
  const std::string label = add_noise(s, model, method, kind, shared, first_only);
  Row row{model, label, o.width, 0.0, {}, {}};
  row.production = repeat(o.repeats, [&] { return production_rate(s); });
  return row;
}

/// The matrix of every model and feature: the production path with moments+regimes (plain),
/// with the histogram, under a ramp schedule, under additive noise (Heun, one realisation per
/// member), with twins every 10 steps, and with 1 and min(dim, 3) Lyapunov exponents
/// (renormalised every 0.5); each row's flops per member-step counted (campaigns.cpp).
std::vector<Row> measure_matrix(const Options& o, const std::string& model) {
  const long members = members_of(o, model);
  const spec::Spec plain = bench_campaign(model, members, o.width, 0, o.steps, false);
  const int dim = models::Registry::instance().find(model)->make(plain.parameters)->state_dim();
  std::vector<std::pair<std::string, spec::Spec>> features;
  features.emplace_back("plain", plain);
  features.emplace_back("histogram", bench_campaign(model, members, o.width, 0, o.steps, true));
  features.emplace_back("schedule", plain);
  add_ramp(features.back().second, model, o.steps);
  features.emplace_back("noise", plain);
  features.back().first = "noise: " + add_noise(features.back().second, model, "heun",
                                                spec::NoiseKind::additive, false, false);
  features.emplace_back("twins every 10 steps", plain);
  features.back().second.statistics.twins = {true, 1e-8, 10 * plain.integration.dt, 0.5};
  for (int k : {1, std::min(dim, 3)}) {
    features.emplace_back("lyapunov " + std::to_string(k), plain);
    features.back().second.statistics.lyapunov = {true, k, 0.5};
  }
  std::vector<Row> rows;
  for (const auto& [label, s] : features) {
    Row row{model, label, o.width, flops_per_member_step(s), {}, {}};
    row.production = repeat(o.repeats, [&s = s] { return production_rate(s); });
    rows.push_back(row);
  }
  return rows;
}

void print_matrix(const std::vector<Row>& rows, const Summary& peak) {
  if (rows.empty()) return;
  std::printf("\nevery model x feature (production path, moments+regimes, width %d): members' "
              "steps per CPU second, flops per member-step counted, GFLOP/s and its share of the "
              "FMA loop, and the rate against the model's plain row\n", rows.front().width);
  double plain = 0.0;
  for (const Row& r : rows) {
    if (r.statistics == "plain") plain = r.production.median;
    const double gflops = r.production.median * r.flops / 1e9;
    std::printf("%-18s %-32s %9.3g (%8.3g-%8.3g) %8.0f flops %6.1f GFLOP/s (%2.0f%%)  %4.2f of plain\n",
                r.model.c_str(), r.statistics.c_str(), r.production.median, r.production.min,
                r.production.max, r.flops, gflops, 100.0 * gflops / peak.median,
                r.production.median / plain);
  }
}

void print_noise(const std::vector<Row>& rows) {
  if (rows.empty()) return;
  std::printf("\nstochastic forcing (production kernel, moments+regimes, noise on every state "
              "variable unless marked, width %d): members' steps per CPU second\n", rows.front().width);
  double base = 0.0;
  for (const Row& r : rows) {
    if (r.statistics == "rk4") base = r.production.median;
    std::printf("%-9s %-44s %9.3g (%8.3g-%8.3g)  rate %4.2f of rk4\n", r.model.c_str(),
                r.statistics.c_str(), r.production.median, r.production.min, r.production.max,
                r.production.median / base);
  }
}

void print_schedule(const std::vector<Row>& rows) {
  if (rows.empty()) return;
  std::printf("\nschedules (production kernel, moments+regimes, width %d): members' steps per CPU "
              "second\n", rows.front().width);
  double base = 0.0;
  for (const Row& r : rows) {
    if (r.statistics == "constant forcing") base = r.production.median;
    std::printf("%-9s %-30s %9.3g (%8.3g-%8.3g)  rate %4.2f of constant\n", r.model.c_str(),
                r.statistics.c_str(), r.production.median, r.production.min, r.production.max,
                r.production.median / base);
  }
}

void print_response(const std::vector<Row>& rows) {
  if (rows.empty()) return;
  std::printf("\nresponse sums (production kernel, moments+regimes, every observable, width %d): "
              "members' steps per CPU second\n", rows.front().width);
  double base = 0.0;
  for (const Row& r : rows) {
    if (r.statistics == "no response") base = r.production.median;
    std::printf("%-9s %-30s %9.3g (%8.3g-%8.3g)  rate %4.2f of without\n", r.model.c_str(),
                r.statistics.c_str(), r.production.median, r.production.min, r.production.max,
                r.production.median / base);
  }
}

void print_lyapunov(const std::vector<Row>& rows) {
  if (rows.empty()) return;
  std::printf("\nLyapunov exponents (production path, moments+regimes, renormalised every 0.5, "
              "width %d): members' steps per CPU second, and tangent-vector steps (rate x k)\n",
              rows.front().width);
  double base = 0.0;
  for (const Row& r : rows) {
    if (r.statistics == "no lyapunov") base = r.production.median;
    const int k = r.statistics == "no lyapunov" ? 0 : std::stoi(r.statistics.substr(9));
    std::printf("%-9s %-22s %9.3g (%8.3g-%8.3g)  rate %4.2f of without  %9.3g tangent steps/s\n",
                r.model.c_str(), r.statistics.c_str(), r.production.median, r.production.min,
                r.production.max, r.production.median / base, r.production.median * k);
  }
}

void print_twins(const std::vector<Row>& twins) {
  if (twins.empty()) return;
  std::printf("\ntwin experiments (production kernel, moments+regimes, width %d): members' "
              "steps per CPU second\n", twins.front().width);
  double base = 0.0;
  for (const Row& r : twins) {
    if (r.statistics == "no twins") base = r.production.median;
    std::printf("%-9s %-22s %9.3g (%8.3g-%8.3g)  cost %4.2fx\n", r.model.c_str(),
                r.statistics.c_str(), r.production.median, r.production.min, r.production.max,
                base / r.production.median);
  }
}

void print_text(const Options& o, const std::vector<Row>& main, const std::vector<Row>& widths,
                const Summary& peak) {
  std::printf("chaosweep-bench\n");
  std::printf("  CPU           %s\n", first_line_of("/proc/cpuinfo", "model name").c_str());
  std::printf("  load average  %s\n", first_line_of("/proc/loadavg", "").c_str());
  std::printf("  built for     %s\n", simd_level().c_str());
  std::printf("  compiler      %s\n", __VERSION__);
  std::printf("  FMA loop      %.1f GFLOP/s per core (median of %d; %.1f-%.1f)\n", peak.median,
              o.repeats, peak.min, peak.max);
  std::printf("  campaign      %ld members (the two-scale ring %ld), %ld accumulated steps, "
              "median of %d runs (min-max), member-steps per CPU second\n\n",
              o.members, members_of(o, kTwoScale), o.steps, o.repeats);
  std::printf("%-18s %-26s %5s  %-27s %-27s %6s  %s\n", "model", "statistics", "width",
              "production kernel", "scalar reference", "ratio", "GFLOP/s (of FMA loop)");
  for (const Row& r : main) {
    const double gflops = r.production.median * r.flops / 1e9;
    std::printf("%-18s %-26s %5d  %9.3g (%8.3g-%8.3g)  %9.3g (%8.3g-%8.3g)  %5.1fx  %5.1f "
                "(%2.0f%%)\n",
                r.model.c_str(), r.statistics.c_str(), r.width, r.production.median,
                r.production.min, r.production.max, r.scalar.median, r.scalar.min, r.scalar.max,
                r.production.median / r.scalar.median, gflops, 100.0 * gflops / peak.median);
  }
  std::printf("\n(flops per member-step, counted in bench/campaigns.cpp:");
  for (const Row& r : main) {
    std::printf(" %s %s %.0f;", r.model.c_str(), r.statistics.c_str(), r.flops);
  }
  std::printf(")\n");
  // per site-step: the two rings side by side (variables per member: n, or K + K J)
  double ring = 0.0, two_scale = 0.0;
  for (const Row& r : main) {
    if (r.statistics != "moments+regimes") continue;
    const spec::Spec s = bench_campaign(r.model, o.width, o.width, 0, 1, false);
    const double sites = r.model == "lorenz96"   ? s.parameters.at("n")[0]
                         : r.model == kTwoScale ? s.parameters.at("K")[0] *
                                                       (1.0 + s.parameters.at("J")[0])
                                                 : 0.0;
    if (r.model == "lorenz96") ring = r.production.median * sites;
    if (r.model == kTwoScale) two_scale = r.production.median * sites;
  }
  if (ring > 0.0 && two_scale > 0.0) {
    std::printf("site-steps per CPU second (moments+regimes): ring %.3g, two-scale ring %.3g "
                "(%.2f of the ring's)\n", ring, two_scale, two_scale / ring);
  }
  if (widths.empty()) return;
  std::printf("\nbatch width (production kernel, moments+regimes+histogram)\n");
  for (const Row& r : widths) {
    std::printf("%-9s width %4d  %9.3g (%8.3g-%8.3g)\n", r.model.c_str(), r.width,
                r.production.median, r.production.min, r.production.max);
  }
}

nlohmann::ordered_json json_summary(const Summary& s) {
  return {{"median", s.median}, {"min", s.min}, {"max", s.max}};
}

void print_json(const Options& o, const std::vector<Row>& main, const std::vector<Row>& widths,
                const std::vector<Row>& twins, const std::vector<Row>& response,
                const std::vector<Row>& schedule, const std::vector<Row>& noise,
                const std::vector<Row>& lyapunov, const std::vector<Row>& matrix,
                const Summary& peak) {
  using Json = nlohmann::ordered_json;
  Json doc{{"cpu", first_line_of("/proc/cpuinfo", "model name")},
           {"load_average", first_line_of("/proc/loadavg", "")},
           {"simd_level", simd_level()},
           {"compiler", __VERSION__},
           {"fma_gflops", json_summary(peak)},
           {"members", o.members},
           {"steps", o.steps},
           {"repeats", o.repeats}};
  Json results = Json::array(), by_width = Json::array(), twin_rows = Json::array();
  for (const Row& r : main) {
    results.push_back(Json{{"model", r.model}, {"statistics", r.statistics}, {"width", r.width},
                           {"production", json_summary(r.production)},
                           {"scalar", json_summary(r.scalar)},
                           {"ratio", r.production.median / r.scalar.median},
                           {"flops_per_member_step", r.flops}});
  }
  for (const Row& r : widths) {
    by_width.push_back(Json{{"model", r.model}, {"width", r.width},
                            {"production", json_summary(r.production)}});
  }
  for (const Row& r : twins) {
    twin_rows.push_back(Json{{"model", r.model}, {"statistics", r.statistics}, {"width", r.width},
                             {"production", json_summary(r.production)}});
  }
  doc["results"] = results;
  doc["widths"] = by_width;
  doc["twins"] = twin_rows;
  Json response_rows = Json::array();
  for (const Row& r : response) {
    response_rows.push_back(Json{{"model", r.model}, {"statistics", r.statistics},
                                 {"width", r.width}, {"production", json_summary(r.production)}});
  }
  doc["response"] = response_rows;
  Json schedule_rows = Json::array();
  for (const Row& r : schedule) {
    schedule_rows.push_back(Json{{"model", r.model}, {"statistics", r.statistics},
                                 {"width", r.width}, {"production", json_summary(r.production)}});
  }
  doc["schedule"] = schedule_rows;
  Json noise_rows = Json::array();
  for (const Row& r : noise) {
    noise_rows.push_back(Json{{"model", r.model}, {"statistics", r.statistics},
                              {"width", r.width}, {"production", json_summary(r.production)}});
  }
  doc["noise"] = noise_rows;
  Json lyapunov_rows = Json::array();
  for (const Row& r : lyapunov) {
    lyapunov_rows.push_back(Json{{"model", r.model}, {"statistics", r.statistics},
                                 {"width", r.width}, {"production", json_summary(r.production)}});
  }
  doc["lyapunov"] = lyapunov_rows;
  Json matrix_rows = Json::array();
  double plain = 0.0;
  for (const Row& r : matrix) {
    if (r.statistics == "plain") plain = r.production.median;
    const double gflops = r.production.median * r.flops / 1e9;
    matrix_rows.push_back(Json{{"model", r.model}, {"feature", r.statistics}, {"width", r.width},
                               {"production", json_summary(r.production)},
                               {"flops_per_member_step", r.flops}, {"gflops", gflops},
                               {"fma_fraction", gflops / peak.median},
                               {"of_plain", r.production.median / plain}});
  }
  doc["matrix"] = matrix_rows;
  std::cout << doc.dump(2) << "\n";
}

int run(const Options& o) {
  // the models with fused kernels take every section; the two-scale ring the main table only
  std::vector<std::string> models = {"lorenz63", "lorenz84", "lorenz96"};
  std::vector<std::string> main_models = {"lorenz63", "lorenz84", "lorenz96", kTwoScale};
  if (o.model != "all") models = main_models = {o.model};
  if (o.model == kTwoScale) models.clear();
  const Summary peak = repeat(o.repeats, [] { return fma_peak_gflops(0.1); });
  std::vector<Row> main, widths, twins, response, schedule, noise, lyapunov, matrix;
  for (const std::string& m : main_models) {
    if (o.runs("main")) {
      for (bool histogram : {false, true}) main.push_back(measure(o, m, histogram, o.width, true));
    }
  }
  for (const std::string& m : models) {
    if (!o.runs("widths")) break;
    for (int w : o.widths) widths.push_back(measure(o, m, true, w, false));
  }
  for (const std::string& m : models) {
    if (!o.runs("twins")) break;
    for (int every : {0, 10, 64}) twins.push_back(measure_twins(o, m, every));
  }
  for (const std::string& m : models) {
    if (!o.runs("response")) break;
    for (bool on : {false, true}) response.push_back(measure_response(o, m, on));
  }
  for (const std::string& m : models) {
    if (!o.runs("schedule")) break;
    for (bool on : {false, true}) schedule.push_back(measure_schedule(o, m, on));
  }
  for (const std::string& m : models) {
    if (!o.runs("noise")) break;
    noise.push_back(measure_noise(o, m, "rk4", spec::NoiseKind::none, false));
    for (const char* method : {"euler-maruyama", "heun"}) {
      noise.push_back(measure_noise(o, m, method, spec::NoiseKind::none, false));
      for (spec::NoiseKind kind : {spec::NoiseKind::additive, spec::NoiseKind::multiplicative,
                                   spec::NoiseKind::red}) {
        for (bool shared : {false, true}) noise.push_back(measure_noise(o, m, method, kind, shared));
      }
      noise.push_back(measure_noise(o, m, method, spec::NoiseKind::additive, false, true));
    }
  }
  for (const std::string& m : models) {
    if (!o.runs("lyapunov")) break;
    const int d = models::Registry::instance()
                      .find(m)
                      ->make(bench_campaign(m, o.width, o.width, 0, 1, false).parameters)
                      ->state_dim();
    for (int k : {0, 1, std::min(d, 3)}) {
      if (k == 1 && d == 1) continue;
      lyapunov.push_back(measure_lyapunov(o, m, k));
    }
  }
  for (const std::string& m : main_models) {
    if (!o.runs("matrix")) break;
    const std::vector<Row> rows = measure_matrix(o, m);
    matrix.insert(matrix.end(), rows.begin(), rows.end());
  }
  if (o.json) {
    print_json(o, main, widths, twins, response, schedule, noise, lyapunov, matrix, peak);
  } else {
    print_text(o, main, widths, peak);
    print_twins(twins);
    print_response(response);
    print_schedule(schedule);
    print_noise(noise);
    print_lyapunov(lyapunov);
    print_matrix(matrix, peak);
  }
  return 0;
}

}  // namespace
}  // namespace chaosweep::bench

int main(int argc, char** argv) {
  chaosweep::bench::Options o;
  CLI::App app{"Throughput of the production batch kernel against the scalar reference"};
  app.add_option("--model", o.model,
                 "lorenz63, lorenz84, lorenz96, lorenz96-two-scale (main table only) or all")
      ->check(CLI::IsMember({"lorenz63", "lorenz84", "lorenz96", "lorenz96-two-scale", "all"}));
  app.add_option("--members", o.members, "members per measurement")->check(CLI::PositiveNumber);
  app.add_option("--steps", o.steps, "accumulated steps per member")->check(CLI::PositiveNumber);
  app.add_option("--width", o.width, "batch width of the main table (a multiple of 8)");
  app.add_option("--widths", o.widths, "batch widths to compare")->delimiter(',');
  app.add_option("--repeats", o.repeats, "repetitions per figure (median reported)")
      ->check(CLI::PositiveNumber);
  app.add_option("--scalar-members", o.scalar_members, "members run by the scalar reference")
      ->check(CLI::PositiveNumber);
  app.add_option("--sections", o.sections,
                 "parts to measure: main, widths, twins, response, schedule, noise, lyapunov, "
                 "matrix (every model x feature)")
      ->delimiter(',')
      ->check(CLI::IsMember(
          {"main", "widths", "twins", "response", "schedule", "noise", "lyapunov", "matrix"}));
  app.add_flag("--json", o.json, "print JSON instead of a table");
  CLI11_PARSE(app, argc, argv);
  try {
    return chaosweep::bench::run(o);
  } catch (const chaosweep::Error& e) {
    std::fprintf(stderr, "chaosweep-bench: %s\n", e.what());
    return e.exit_code();
  }
}
