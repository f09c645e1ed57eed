// `chaosweep summary`: the response tables of an archive as an aligned table, CSV or JSON.
#include <cmath>
#include <cstdio>
#include <string>

#include "app/commands.hpp"
#include "archive/reader.hpp"

namespace chaosweep::app {
namespace {

using archive::ArchiveSummary;

std::size_t idx(std::size_t row, std::size_t width, std::size_t col) { return row * width + col; }

/// A number for JSON: shortest round-trip form, null for NaN or infinity.
std::string json_number(double v) {
  if (!std::isfinite(v)) return "null";
  char text[40];
  std::snprintf(text, sizeof text, "%.17g", v);
  return text;
}

std::string json_string(const std::string& s) {
  std::string out = "\"";
  for (char ch : s) {
    if (ch == '"' || ch == '\\') out += '\\';
    if (static_cast<unsigned char>(ch) < 0x20) {
      char esc[8];
      std::snprintf(esc, sizeof esc, "\\u%04x", ch);
      out += esc;
      continue;
    }
    out += ch;
  }
  return out + "\"";
}

std::string json_estimate(double mean, double std, const double* ci) {
  return "{\"mean\": " + json_number(mean) + ", \"std\": " + json_number(std) + ", \"ci95\": [" +
         json_number(ci[0]) + ", " + json_number(ci[1]) + "]}";
}

void print_json(const ArchiveSummary& s) {
  const std::size_t n_obs = s.observables.size(), n_reg = s.regimes.size();
  std::printf("{\n  \"campaign\": %s,\n  \"model\": %s,\n  \"status\": %s,\n",
              json_string(s.campaign).c_str(), json_string(s.model).c_str(),
              json_string(s.status).c_str());
  std::printf("  \"format_version\": %d,\n  \"members_per_case\": %lld,\n", s.format_version,
              static_cast<long long>(s.members));
  auto list = [](const std::vector<std::string>& v) {
    std::string out = "[";
    for (std::size_t i = 0; i < v.size(); ++i) out += (i ? ", " : "") + json_string(v[i]);
    return out + "]";
  };
  std::printf("  \"axes\": %s,\n  \"observables\": %s,\n  \"regimes\": %s,\n  \"cases\": [\n",
              list(s.axes).c_str(), list(s.observables).c_str(), list(s.regimes).c_str());
  for (std::int64_t c = 0; c < s.cases; ++c) {
    std::string params;
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      params += (a ? ", " : "") + json_string(s.axes[a]) + ": " + json_number(s.axis_values[a][c]);
    }
    std::printf("    {\"index\": %lld, \"parameters\": {%s}, \"valid_members\": %lld, "
                "\"effective_members\": %s,\n     \"time_mean\": {",
                static_cast<long long>(c), params.c_str(),
                static_cast<long long>(s.valid_members[c]),
                json_number(s.effective_members[c]).c_str());
    for (std::size_t o = 0; o < n_obs; ++o) {
      const std::size_t i = idx(c, n_obs, o);
      std::printf("%s%s: %s", o ? ", " : "", json_string(s.observables[o]).c_str(),
                  json_estimate(s.time_mean[i], s.time_mean_std[i], &s.time_mean_ci95[2 * i]).c_str());
    }
    std::printf("},\n     \"regime_fraction\": {");
    for (std::size_t k = 0; k < n_reg; ++k) {
      const std::size_t i = idx(c, n_reg, k);
      std::printf("%s%s: %s", k ? ", " : "", json_string(s.regimes[k]).c_str(),
                  json_estimate(s.regime_fraction[i], s.regime_fraction_std[i],
                                &s.regime_fraction_ci95[2 * i]).c_str());
    }
    std::printf("}}%s\n", c + 1 < s.cases ? "," : "");
  }
  std::printf("  ],\n  \"response\": [");
  bool first = true;
  for (std::size_t a = 0; a < s.axes.size(); ++a) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      const std::size_t i = idx(a, n_obs, o);
      std::printf("%s\n    {\"axis\": %s, \"observable\": %s, \"slope\": %s, \"stderr\": %s}",
                  first ? "" : ",", json_string(s.axes[a]).c_str(),
                  json_string(s.observables[o]).c_str(), json_number(s.slope[i]).c_str(),
                  json_number(s.slope_stderr[i]).c_str());
      first = false;
    }
  }
  std::printf("%s]\n}\n", first ? "" : "\n  ");
}

void print_csv(const ArchiveSummary& s) {
  const std::size_t n_obs = s.observables.size(), n_reg = s.regimes.size();
  std::printf("case");
  for (const std::string& a : s.axes) std::printf(",%s", a.c_str());
  std::printf(",quantity,name,mean,std,ci95_low,ci95_high,valid_members,members\n");
  auto row = [&](std::int64_t c, const char* quantity, const std::string& name, double mean,
                 double std, const double* ci) {
    std::printf("%lld", static_cast<long long>(c));
    for (std::size_t a = 0; a < s.axes.size(); ++a) std::printf(",%.17g", s.axis_values[a][c]);
    std::printf(",%s,%s,%.17g,%.17g,%.17g,%.17g,%lld,%lld\n", quantity, name.c_str(), mean, std,
                ci[0], ci[1], static_cast<long long>(s.valid_members[c]),
                static_cast<long long>(s.members));
  };
  for (std::int64_t c = 0; c < s.cases; ++c) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      const std::size_t i = idx(c, n_obs, o);
      row(c, "time_mean", s.observables[o], s.time_mean[i], s.time_mean_std[i],
          &s.time_mean_ci95[2 * i]);
    }
    for (std::size_t k = 0; k < n_reg; ++k) {
      const std::size_t i = idx(c, n_reg, k);
      row(c, "regime_fraction", s.regimes[k], s.regime_fraction[i], s.regime_fraction_std[i],
          &s.regime_fraction_ci95[2 * i]);
    }
  }
}

/// "mean [low, high]" with a precision suited to the interval's width.
std::string estimate_text(double mean, const double* ci) {
  if (!std::isfinite(mean)) return "n/a";
  const double half = 0.5 * (ci[1] - ci[0]);
  int digits = 3;
  if (std::isfinite(half) && half > 0) {
    digits = std::max(1, std::min(6, 2 - static_cast<int>(std::floor(std::log10(half)))));
  }
  char text[96];
  if (std::isfinite(half)) {
    std::snprintf(text, sizeof text, "%.*f [%.*f, %.*f]", digits, mean, digits, ci[0], digits, ci[1]);
  } else {
    std::snprintf(text, sizeof text, "%.*f", digits, mean);
  }
  return text;
}

void print_block(const ArchiveSummary& s, const char* title, const std::vector<std::string>& names,
                 const std::vector<double>& mean, const std::vector<double>& ci) {
  std::printf("\n%s (ensemble mean [95%% interval of the mean])\n", title);
  std::printf("%5s", "case");
  for (const std::string& a : s.axes) std::printf(" %10s", a.c_str());
  std::printf(" %11s", "valid");
  for (const std::string& n : names) std::printf(" %28s", n.c_str());
  std::printf("\n");
  for (std::int64_t c = 0; c < s.cases; ++c) {
    std::printf("%5lld", static_cast<long long>(c));
    for (std::size_t a = 0; a < s.axes.size(); ++a) std::printf(" %10.4g", s.axis_values[a][c]);
    const std::string valid = std::to_string(s.valid_members[c]) + "/" + std::to_string(s.members);
    std::printf(" %11s", valid.c_str());
    for (std::size_t o = 0; o < names.size(); ++o) {
      const std::size_t i = idx(c, names.size(), o);
      std::printf(" %28s", estimate_text(mean[i], &ci[2 * i]).c_str());
    }
    std::printf("\n");
  }
}

void print_table(const ArchiveSummary& s) {
  std::int64_t valid = 0;
  for (std::int64_t v : s.valid_members) valid += v;
  std::printf("campaign %s: model %s, %lld cases x %lld members, %lld valid, archive %s\n",
              s.campaign.c_str(), s.model.c_str(), static_cast<long long>(s.cases),
              static_cast<long long>(s.members), static_cast<long long>(valid), s.status.c_str());
  print_block(s, "time mean", s.observables, s.time_mean, s.time_mean_ci95);
  if (!s.regimes.empty()) {
    print_block(s, "regime fraction", s.regimes, s.regime_fraction, s.regime_fraction_ci95);
  }
  if (!s.axes.empty()) {
    std::printf("\nresponse slope of the ensemble time mean (least squares, +- standard error)\n");
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      for (std::size_t o = 0; o < s.observables.size(); ++o) {
        const std::size_t i = idx(a, s.observables.size(), o);
        std::printf("  d<%s>/d%s = %.4g +- %.2g\n", s.observables[o].c_str(), s.axes[a].c_str(),
                    s.slope[i], s.slope_stderr[i]);
      }
    }
  }
  std::printf("\nunits: nondimensional model units; time in model time units\n");
}

}  // namespace

int summary_command(const SummaryOptions& options) {
  const ArchiveSummary s = archive::read_summary(options.archive);
  if (options.format == "json") {
    print_json(s);
  } else if (options.format == "csv") {
    print_csv(s);
  } else {
    print_table(s);
  }
  return 0;
}

}  // namespace chaosweep::app
