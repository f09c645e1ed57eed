// `chaosweep summary`: the response tables of an archive as an aligned table, CSV or JSON.
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <cstdio>
#include <string>
#include <type_traits>
#include <variant>
#include <vector>

#include <nlohmann/json.hpp>

#include "app/commands.hpp"
#include "archive/reader.hpp"
#include "results/table.hpp"
#include "stats/ensemble.hpp"
#include "stats/lyapunov.hpp"

namespace chaosweep::app {
namespace {

using archive::ArchiveSummary;
using Json = nlohmann::ordered_json;

std::size_t idx(std::size_t row, std::size_t width, std::size_t col) { return row * width + col; }

/// Names of the Lyapunov exponents: lambda1 (leading), lambda2, ...
std::vector<std::string> exponent_names(const ArchiveSummary& s) {
  std::vector<std::string> names;
  for (int k = 1; k <= s.exponents; ++k) names.push_back("lambda" + std::to_string(k));
  return names;
}

/// Kaplan-Yorke dimension of a case's ensemble-mean exponents (NaN when the exponents do not
/// reach a negative sum).
double kaplan_yorke(const ArchiveSummary& s, std::int64_t c) {
  const auto first = s.lyapunov.begin() + c * s.exponents;
  try {
    return stats::kaplan_yorke_dimension(std::vector<double>(first, first + s.exponents));
  } catch (const std::invalid_argument&) {  // means of ties out of order by rounding
    return NAN;
  }
}

/// Whether case c is flagged non-chaotic (archives without the flag: no).
bool non_chaotic(const ArchiveSummary& s, std::int64_t c) {
  return !s.non_chaotic.empty() && s.non_chaotic[static_cast<std::size_t>(c)] != 0;
}

/// A CSV field: quoted (quotes doubled) when it holds a comma, a quote or a line break.
std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char ch : text) out += ch == '"' ? std::string("\"\"") : std::string(1, ch);
  return out + "\"";
}

std::string number_text(const char* format, double v) {
  char text[48];
  std::snprintf(text, sizeof text, format, v);
  return text;
}

/// Snapshot statistics shown by `summary`: the first observable at the first, middle and last
/// snapshot time, with the 95% interval of the across-member mean,
///   mean +- t(0.975, n-1) sqrt(variance / n),  n = the case's valid members.
struct SnapshotView {
  std::vector<std::size_t> times;  // snapshot indices shown (distinct, ascending)
  std::vector<double> mean, std, ci95;  // [case][shown], ci95 [case][shown][2]
};

SnapshotView snapshot_view(const ArchiveSummary& s) {
  SnapshotView v;
  const std::size_t n = s.snapshot_time.size(), n_obs = s.observables.size();
  if (n == 0 || n_obs == 0) return v;
  for (std::size_t k : {std::size_t{0}, (n - 1) / 2, n - 1}) {
    if (v.times.empty() || v.times.back() != k) v.times.push_back(k);
  }
  for (std::int64_t c = 0; c < s.cases; ++c) {
    const double members = static_cast<double>(s.valid_members[c]);
    const double t = stats::student_t975(members - 1.0);
    for (std::size_t k : v.times) {
      const std::size_t i = (static_cast<std::size_t>(c) * n + k) * n_obs;  // observable 0
      const double mean = s.snapshot_mean[i], var = s.snapshot_variance[i];
      const double half = t * std::sqrt(var / members);
      v.mean.push_back(mean);
      v.std.push_back(std::sqrt(var));
      v.ci95.push_back(mean - half);
      v.ci95.push_back(mean + half);
    }
  }
  return v;
}

/// "<observable>@<time>" names of the shown snapshot statistics (csv and table).
std::vector<std::string> snapshot_names(const ArchiveSummary& s, const SnapshotView& v,
                                        const char* format) {
  std::vector<std::string> names;
  for (std::size_t k : v.times) {
    char text[64];
    std::snprintf(text, sizeof text, format, s.snapshot_time[k]);
    names.push_back(s.observables[0] + text);
  }
  return names;
}

using results::PerCase;
using results::Quantity;

/// The names along dimension `dim` of archive `s`, for keys, rows and columns: observable and
/// regime labels, lambda1.. for exponents, the fixed labels of bound and window_edge; empty for
/// a dimension the summary does not tabulate (leads, snapshot times, histogram bins: curves
/// are for the figures).
std::vector<std::string> labels(const ArchiveSummary& s, const std::string& dim) {
  if (dim == "observable") return s.observables;
  if (dim == "regime") return s.regimes;
  if (dim == "exponent") return exponent_names(s);
  return results::dimension(dim).labels;
}

/// Whether the archive holds quantity `q` (the reader leaves absent datasets empty).
bool held(const ArchiveSummary& s, const Quantity& q) {
  bool any = false;
  std::visit([&](auto field) {
    if constexpr (!std::is_same_v<decltype(field), std::monostate>) any = !(s.*field).empty();
  }, q.ensemble_field);
  return any;
}

/// The per-case results the summary shows: held by the archive, indexed by case alone or by
/// case and one labelled dimension. `names` are the labels along that dimension (one empty
/// name for a per-case scalar).
struct Shown {
  PerCase result;
  std::vector<std::string> names;
  std::string key() const { return result.value->leaf(); }
};

std::vector<Shown> shown_results(const ArchiveSummary& s) {
  std::vector<Shown> out;
  for (const PerCase& p : results::per_case_results()) {
    const Quantity& q = *p.value;
    if (!held(s, q) || q.dims.size() > 2) continue;
    std::vector<std::string> names{""};
    if (q.dims.size() == 2) names = labels(s, q.dims[1]);
    if (names.empty()) continue;
    out.push_back(Shown{p, names});
  }
  return out;
}

/// Element i of quantity q as JSON: a number (NaN: null), an integer, a flag or a text.
Json json_cell(const ArchiveSummary& s, const Quantity& q, std::size_t i) {
  Json out;
  std::visit([&](auto field) {
    if constexpr (!std::is_same_v<decltype(field), std::monostate>) {
      const auto& values = s.*field;
      if constexpr (std::is_same_v<std::decay_t<decltype(values)>, std::vector<std::uint8_t>>) {
        out = values.at(i) != 0;
      } else {
        out = values.at(i);
      }
    }
  }, q.ensemble_field);
  return out;
}

/// Element i of quantity q as a CSV field: a number to 17 significant digits, an integer, 0/1,
/// or a (quoted when needed) text.
std::string csv_cell(const ArchiveSummary& s, const Quantity& q, std::size_t i) {
  std::string out;
  std::visit([&](auto field) {
    if constexpr (!std::is_same_v<decltype(field), std::monostate>) {
      const auto& value = (s.*field).at(i);
      using V = std::decay_t<decltype(value)>;
      if constexpr (std::is_same_v<V, double>) {
        char text[32];
        std::snprintf(text, sizeof text, "%.17g", value);
        out = text;
      } else if constexpr (std::is_same_v<V, std::string>) {
        out = csv_field(value);
      } else {
        out = std::to_string(static_cast<long long>(value));
      }
    }
  }, q.ensemble_field);
  return out;
}

/// Element i of a float64 quantity.
double number(const ArchiveSummary& s, const Quantity& q, std::size_t i) {
  const results::EnsembleResults& ensemble = s;
  return results::array_of<double>(ensemble, q).at(i);
}

/// The key of an estimate's central value.
const char* value_key(const Quantity& q) {
  return q.estimate == results::Estimate::median ? "median" : "mean";
}

/// Entry i of a shown result: the value itself, or for an estimate {mean|median, std, ci95,
/// details...}.
Json json_entry(const ArchiveSummary& s, const PerCase& p, std::size_t i) {
  if (p.value->estimate == results::Estimate::none) return json_cell(s, *p.value, i);
  Json e{{value_key(*p.value), json_cell(s, *p.value, i)}};
  if (p.std && held(s, *p.std)) e["std"] = json_cell(s, *p.std, i);
  if (p.ci95 && held(s, *p.ci95)) {
    e["ci95"] = {json_cell(s, *p.ci95, 2 * i), json_cell(s, *p.ci95, 2 * i + 1)};
  }
  for (const Quantity* d : p.details) {
    e[p.detail_key(*d)] = held(s, *d) ? json_cell(s, *d, i) : Json();
  }
  return e;
}

Json json_case(const ArchiveSummary& s, std::int64_t c, const std::vector<Shown>& shown) {
  Json parameters = Json::object();
  for (std::size_t a = 0; a < s.axes.size(); ++a) parameters[s.axes[a]] = s.axis_values[a][c];
  Json out{{"index", c}, {"parameters", parameters}, {"members", s.members}};
  for (const Shown& r : shown) {
    const std::size_t width = r.names.size(), first = static_cast<std::size_t>(c) * width;
    if (r.result.value->dims.size() == 1) {
      out[r.key()] = json_entry(s, r.result, first);
      continue;
    }
    Json along = Json::object();
    for (std::size_t k = 0; k < width; ++k) along[r.names[k]] = json_entry(s, r.result, first + k);
    out[r.key()] = along;
  }
  const SnapshotView snap = snapshot_view(s);
  if (!snap.times.empty()) {
    Json shown_snaps = Json::array();
    for (std::size_t j = 0; j < snap.times.size(); ++j) {
      const std::size_t i = idx(c, snap.times.size(), j);
      shown_snaps.push_back(Json{{"time", s.snapshot_time[snap.times[j]]},
                                 {"observable", s.observables[0]}, {"mean", snap.mean[i]},
                                 {"std", snap.std[i]},
                                 {"ci95", {snap.ci95[2 * i], snap.ci95[2 * i + 1]}}});
    }
    out["snapshots"] = shown_snaps;
  }
  if (s.exponents > 0) out["kaplan_yorke_dimension"] = kaplan_yorke(s, c);
  return out;
}

/// The whole summary as JSON (nlohmann's output: NaN and infinities become null, numbers print
/// in their shortest form that reads back to the same double).
void print_json(const ArchiveSummary& s) {
  const std::vector<Shown> shown = shown_results(s);
  Json doc{{"campaign", s.campaign}, {"model", s.model}, {"status", s.status},
           {"format_version", s.format_version}, {"members_per_case", s.members},
           {"tool_version", s.tool_version}, {"created_utc", s.created_utc}};
  Json units{{"parameters", "1"}, {"time", results::kModelTime}};
  for (const Shown& r : shown) units[r.key()] = r.result.value->units;
  units["slope"] = "1 per unit of the parameter";
  doc["units"] = units;
  doc["interval"] = "ci95: 95% confidence interval of the ensemble mean, mean +- t(0.975, n-1) "
                    "se, n = valid members; for time means se is stderr (below), for the other "
                    "quantities s / sqrt(n) with s their std across members";
  doc["non_chaotic"] = "true when the case does not behave chaotically (its intervals then "
                       "describe no chaotic variability); non_chaotic_reason says why";
  doc["stderr"] = "standard error of the ensemble time mean: the larger of std / sqrt(n) and "
                  "the members' blocking standard errors pooled, sqrt(sum stderr^2) / n; "
                  "effective_samples: sum over valid members of n_steps / (2 tau_int); "
                  "decorrelation_time: mean tau_int, model time units";
  if (!s.snapshot_time.empty()) {
    doc["snapshot_times"] = s.snapshot_time.size();
    doc["snapshots"] = "per case: the first observable across the valid members at the first, "
                       "middle and last snapshot time (model time units from the start of the "
                       "integration); std across members, ci95 of their mean as above";
  }
  doc["axes"] = s.axes;
  doc["observables"] = s.observables;
  doc["regimes"] = s.regimes;
  Json cases = Json::array();
  for (std::int64_t c = 0; c < s.cases; ++c) cases.push_back(json_case(s, c, shown));
  doc["cases"] = cases;
  Json response = Json::array();
  const std::size_t n_obs = s.observables.size();
  for (std::size_t a = 0; a < s.axes.size(); ++a) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      const std::size_t i = idx(a, n_obs, o);
      Json entry{{"axis", s.axes[a]}, {"observable", s.observables[o]},
                 {"slope", s.slope[i]}, {"stderr", s.slope_stderr[i]}};
      if (s.linear_fit_pvalue.size() == s.axes.size() * n_obs) {  // absent from older archives
        entry["linear_fit"] = Json{{"chi2", s.linear_fit_chi2[i]}, {"dof", s.linear_fit_dof[i]},
                                   {"p_value", s.linear_fit_pvalue[i]}};
      }
      const std::size_t cases = static_cast<std::size_t>(s.cases);
      if (s.local_slope.size() == s.axes.size() * cases * n_obs) {
        Json local = Json::array(), local_se = Json::array();
        for (std::size_t c = 0; c < cases; ++c) {
          local.push_back(s.local_slope[(a * cases + c) * n_obs + o]);
          local_se.push_back(s.local_slope_stderr[(a * cases + c) * n_obs + o]);
        }
        entry["local_slope"] = local;
        entry["local_slope_stderr"] = local_se;
      }
      response.push_back(entry);
    }
  }
  doc["response"] = response;
  if (!s.forcings.empty()) {
    Json predicted = Json::array();
    const std::size_t cases = static_cast<std::size_t>(s.cases);
    for (std::size_t p = 0; p < s.forcings.size(); ++p) {
      for (std::size_t o = 0; o < n_obs; ++o) {
        Json value = Json::array(), se = Json::array();
        for (std::size_t c = 0; c < cases; ++c) {
          value.push_back(s.predicted_slope[(p * cases + c) * n_obs + o]);
          se.push_back(s.predicted_slope_stderr[(p * cases + c) * n_obs + o]);
        }
        predicted.push_back(Json{{"forcing", s.forcings[p]}, {"observable", s.observables[o]},
                                 {"predicted_slope", value}, {"stderr", se}});
      }
    }
    doc["predicted_response"] = predicted;
    doc["predicted_slope"] = "per case (in case order): the derivative of the observable's mean "
                             "with respect to the additive forcing predicted from the case's own "
                             "fluctuations (quasi-Gaussian relation), and its jackknife standard "
                             "error over groups of members";
  }
  if (!s.axes.empty()) {
    doc["linear_fit"] = "chi2 of the best weighted linear fit of the cases' time means on the "
                        "parameters (weights 1/stderr^2), its degrees of freedom and p-value: a "
                        "small p_value flags a response that is not linear";
    doc["local_slope"] = "per case (in case order): the derivative of the time mean along the "
                         "parameter, the other parameters fixed (central differences, one-sided "
                         "at the ends of the axis), and its standard error";
  }
  std::printf("%s\n", doc.dump(2).c_str());
}

/// The keys of every detail any shown estimate carries, in table order (the CSV's last columns).
std::vector<std::string> detail_keys(const std::vector<PerCase>& results) {
  std::vector<std::string> keys;
  for (const PerCase& p : results) {
    for (const Quantity* d : p.details) {
      const std::string key = p.detail_key(*d);
      if (std::find(keys.begin(), keys.end(), key) == keys.end()) keys.push_back(key);
    }
  }
  return keys;
}

void print_csv(const ArchiveSummary& s) {
  const std::vector<Shown> shown = shown_results(s);
  const std::vector<std::string> details = detail_keys(results::per_case_results());
  std::printf("case");
  for (const std::string& a : s.axes) std::printf(",%s", a.c_str());
  std::printf(",quantity,name,mean,std,ci95_low,ci95_high,valid_members,members,units");
  for (const std::string& key : details) std::printf(",%s", key.c_str());
  std::printf("\n");
  // cells: mean, std, ci95_low, ci95_high, then one per detail key
  auto row = [&](std::int64_t c, const std::string& quantity, const std::string& name,
                 const std::vector<std::string>& cells, const std::string& units) {
    std::printf("%lld", static_cast<long long>(c));
    for (std::size_t a = 0; a < s.axes.size(); ++a) std::printf(",%.17g", s.axis_values[a][c]);
    std::printf(",%s,%s", quantity.c_str(), name.c_str());
    for (std::size_t k = 0; k < 4; ++k) std::printf(",%s", cells[k].c_str());
    std::printf(",%lld,%lld,%s", static_cast<long long>(s.valid_members[c]),
                static_cast<long long>(s.members), units.c_str());
    for (std::size_t k = 4; k < cells.size(); ++k) std::printf(",%s", cells[k].c_str());
    std::printf("\n");
  };
  const SnapshotView snap = snapshot_view(s);
  const std::vector<std::string> snap_names = snapshot_names(s, snap, "@%.17g");
  for (std::int64_t c = 0; c < s.cases; ++c) {
    for (const Shown& r : shown) {
      const PerCase& p = r.result;
      const bool text = p.value->type == results::ElementType::text;
      for (std::size_t k = 0; k < r.names.size(); ++k) {
        const std::size_t i = static_cast<std::size_t>(c) * r.names.size() + k;
        std::vector<std::string> cells(4 + details.size());
        // a text result goes in the name column (the reason a case is flagged, ...)
        const std::string name = text ? csv_cell(s, *p.value, i) : r.names[k];
        if (!text) cells[0] = csv_cell(s, *p.value, i);
        if (p.std && held(s, *p.std)) cells[1] = csv_cell(s, *p.std, i);
        if (p.ci95 && held(s, *p.ci95)) {
          cells[2] = csv_cell(s, *p.ci95, 2 * i);
          cells[3] = csv_cell(s, *p.ci95, 2 * i + 1);
        }
        for (const Quantity* d : p.details) {
          const auto at = std::find(details.begin(), details.end(), p.detail_key(*d));
          if (held(s, *d)) cells[4 + static_cast<std::size_t>(at - details.begin())] = csv_cell(s, *d, i);
        }
        row(c, r.key(), name, cells, p.value->units);
      }
    }
    const std::string snap_units = results::at_path("/snapshot/mean").units;
    for (std::size_t j = 0; j < snap.times.size(); ++j) {
      const std::size_t i = idx(c, snap.times.size(), j);
      std::vector<std::string> cells(4 + details.size());
      const double values[4] = {snap.mean[i], snap.std[i], snap.ci95[2 * i], snap.ci95[2 * i + 1]};
      for (std::size_t k = 0; k < 4; ++k) cells[k] = number_text("%.17g", values[k]);
      row(c, "snapshot_mean", snap_names[j], cells, snap_units);
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

/// The case index, marked "*" when the case is flagged non-chaotic.
std::string case_label(const ArchiveSummary& s, std::int64_t c) {
  return std::to_string(c) + (non_chaotic(s, c) ? "*" : "");
}

/// Rows of cells printed with every column right-aligned to its widest cell (header included),
/// two spaces apart.
void print_aligned(const std::vector<std::vector<std::string>>& rows) {
  std::vector<std::size_t> width;
  for (const auto& row : rows) {
    if (width.size() < row.size()) width.resize(row.size(), 0);
    for (std::size_t i = 0; i < row.size(); ++i) width[i] = std::max(width[i], row[i].size());
  }
  for (const auto& row : rows) {
    std::string line;
    for (std::size_t i = 0; i < row.size(); ++i) {
      line += (i ? "  " : "") + std::string(width[i] - row[i].size(), ' ') + row[i];
    }
    std::printf("%s\n", line.c_str());
  }
}

/// One block of the table: a row per case with its swept values, valid/total members and
/// cell(case * names + name) for each name. Many names are split over several aligned sub-tables
/// (each repeating the case columns) so that a line stays about kLineWidth characters wide.
template <typename Cell>
void print_case_block(const ArchiveSummary& s, const std::string& title,
                      const std::vector<std::string>& names, Cell cell) {
  constexpr std::size_t kLineWidth = 120;
  std::printf("\n%s\n", title.c_str());
  std::vector<std::vector<std::string>> lead(1), cells(1);
  lead[0].push_back("case");
  for (const std::string& a : s.axes) lead[0].push_back(a);
  lead[0].push_back("valid/total");
  cells[0] = names;
  for (std::int64_t c = 0; c < s.cases; ++c) {
    std::vector<std::string> row{case_label(s, c)};
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      row.push_back(number_text("%.6g", s.axis_values[a][c]));
    }
    row.push_back(std::to_string(s.valid_members[c]) + "/" + std::to_string(s.members));
    lead.push_back(row);
    std::vector<std::string> values;
    for (std::size_t o = 0; o < names.size(); ++o) {
      const std::size_t i = idx(c, names.size(), o);
      values.push_back(cell(i));
    }
    cells.push_back(values);
  }
  auto column_width = [](const std::vector<std::vector<std::string>>& rows, std::size_t i) {
    std::size_t w = 0;
    for (const auto& row : rows) w = std::max(w, row[i].size());
    return w + 2;
  };
  std::size_t lead_width = 0;
  for (std::size_t i = 0; i < lead[0].size(); ++i) lead_width += column_width(lead, i);
  std::size_t first = 0;
  while (first < names.size()) {
    std::size_t last = first, width = lead_width;
    while (last < names.size() &&
           (last == first || width + column_width(cells, last) <= kLineWidth)) {
      width += column_width(cells, last++);
    }
    std::vector<std::vector<std::string>> rows = lead;
    for (std::size_t r = 0; r < rows.size(); ++r) {
      rows[r].insert(rows[r].end(), cells[r].begin() + static_cast<std::ptrdiff_t>(first),
                     cells[r].begin() + static_cast<std::ptrdiff_t>(last));
    }
    if (first > 0) std::printf("\n");
    print_aligned(rows);
    first = last;
  }
}

/// A block of "mean [95% interval]" cells.
void print_block(const ArchiveSummary& s, const std::string& title,
                 const std::vector<std::string>& names, const std::vector<double>& mean,
                 const std::vector<double>& ci) {
  print_case_block(s, title, names,
                   [&](std::size_t i) { return estimate_text(mean[i], &ci[2 * i]); });
}

/// Units in words, for titles.
std::string units_text(const std::string& units) {
  if (units == results::kModelTime) return "model time units";
  if (units == results::kPerModelTime) return "per model time unit";
  return units == "1" ? "non-dimensional" : units;
}

/// "time mean" for /ensemble/time_mean.
std::string spaced(std::string name) {
  std::replace(name.begin(), name.end(), '_', ' ');
  return name;
}

/// The blocks of a result along a campaign-named dimension (observables, regimes, exponents):
/// "mean [95% interval]" (or the values) per case, then its details per case.
void print_result_blocks(const ArchiveSummary& s, const Shown& r) {
  const PerCase& p = r.result;
  const Quantity& q = *p.value;
  const bool interval = p.ci95 && held(s, *p.ci95);
  const std::string what = q.estimate == results::Estimate::none ? q.long_name
                           : q.estimate == results::Estimate::median ? "ensemble median"
                                                                      : "ensemble mean";
  print_case_block(s, spaced(q.leaf()) + " (" + units_text(q.units) + "): " + what +
                          (interval ? " [95% confidence interval]" : ""),
                   r.names, [&](std::size_t i) {
                     const double mean = number(s, q, i);
                     if (!interval) return number_text("%.6g", mean);
                     const double ci[2] = {number(s, *p.ci95, 2 * i), number(s, *p.ci95, 2 * i + 1)};
                     return estimate_text(mean, ci);
                   });
  std::vector<const Quantity*> details;
  for (const Quantity* d : p.details) {
    if (held(s, *d) && d->type == results::ElementType::float64) details.push_back(d);
  }
  if (details.empty()) return;
  std::string title = "beside each " + spaced(q.leaf()) + ": ";
  for (std::size_t k = 0; k < details.size(); ++k) {
    title += (k ? " | " : "") + spaced(p.detail_key(*details[k])) + " (" +
             units_text(details[k]->units) + ")";
  }
  print_case_block(s, title, r.names, [&](std::size_t i) {
    std::string cell;
    for (const Quantity* d : details) {
      cell += (cell.empty() ? "" : " | ") + number_text("%.3g", number(s, *d, i));
    }
    return cell;
  });
}

/// "median [low, high]" of the Kaplan-Meier median horizon ("> last" for an open upper end).
std::string median_text(const ArchiveSummary& s, std::int64_t c) {
  const double median = s.horizon_median[c], low = s.horizon_median_ci95[2 * c],
               high = s.horizon_median_ci95[2 * c + 1];
  if (!std::isfinite(median)) return "n/a";
  return number_text("%.4g", median) + " [" + number_text("%.4g", low) + ", " +
         (std::isfinite(high) ? number_text("%.4g", high) : std::string("beyond the window")) +
         "]";
}

/// Why case c's twin estimates need care: no growth rate, or too few pairs separated.
void print_twin_notes(const ArchiveSummary& s) {
  for (std::int64_t c = 0; c < s.cases; ++c) {
    if (!s.growth_note.empty() && !s.growth_note[c].empty()) {
      std::printf("case %lld: no growth rate: %s\n", static_cast<long long>(c),
                  s.growth_note[c].c_str());
    }
    const double pairs = static_cast<double>(s.twin_pairs[c]);
    const double reached = static_cast<double>(s.horizon_reached[c]);
    if (non_chaotic(s, c) && reached == 0.0) continue;  // flagged below, with the reason
    if (pairs > 0 && reached < 0.9 * pairs) {
      const bool median = !s.horizon_median.empty() && std::isfinite(s.horizon_median[c]);
      std::printf("case %lld: only %lld of %lld pairs separated within the window: the mean "
                  "horizon over them is biased low; %s",
                  static_cast<long long>(c), static_cast<long long>(s.horizon_reached[c]),
                  static_cast<long long>(s.twin_pairs[c]),
                  median ? "read the median" : "fewer than half separated, so no median");
      if (!s.suggested_duration.empty() && std::isfinite(s.suggested_duration[c])) {
        std::printf("; at the pace so far a duration of about %.3g would let about 90%% "
                    "separate", s.suggested_duration[c]);
      } else if (!s.suggested_duration.empty()) {
        std::printf("; their survival curve levelled off or too few separated to extrapolate: "
                    "a longer window may not separate the rest");
      }
      std::printf("\n");
    }
  }
}

/// Per case: the mean horizon [95% interval] over the members that reached the threshold, how
/// many did (of the valid pairs), the median horizon of all valid pairs, and the growth rate
/// of the mean log separation.
void print_twins_table(const ArchiveSummary& s) {
  const bool median = !s.horizon_median.empty();
  std::printf("\ntwin experiment: horizon in model time units, ensemble mean [95%% confidence "
              "interval] over the members that reached the threshold%s; growth rate of the mean "
              "log separation per model time unit over its linear phase\n",
              median ? "; median [95% interval] over all valid pairs (Kaplan-Meier, pairs not "
                       "separated by the last lead censored there)"
                     : "");
  std::vector<std::vector<std::string>> rows(1);
  rows[0].push_back("case");
  for (const std::string& a : s.axes) rows[0].push_back(a);
  rows[0].push_back("horizon");
  rows[0].push_back("reached/pairs");
  if (median) rows[0].push_back("median horizon");
  rows[0].push_back("growth rate");
  rows[0].push_back("fit window");
  for (std::int64_t c = 0; c < s.cases; ++c) {
    std::vector<std::string> row{case_label(s, c)};
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      row.push_back(number_text("%.6g", s.axis_values[a][c]));
    }
    row.push_back(estimate_text(s.horizon[c], &s.horizon_ci95[2 * c]));
    row.push_back(std::to_string(s.horizon_reached[c]) + "/" + std::to_string(s.twin_pairs[c]));
    if (median) row.push_back(median_text(s, c));
    row.push_back(number_text("%.4g", s.growth_rate[c]));
    row.push_back(std::isfinite(s.growth_window[2 * c])
                      ? number_text("%.4g", s.growth_window[2 * c]) + " - " +
                            number_text("%.4g", s.growth_window[2 * c + 1])
                      : "n/a");
    rows.push_back(row);
  }
  print_aligned(rows);
  print_twin_notes(s);
}

/// The cases flagged non-chaotic, with the reasons.
void print_non_chaotic(const ArchiveSummary& s) {
  bool any = false;
  for (std::int64_t c = 0; c < s.cases; ++c) any = any || non_chaotic(s, c);
  if (!any) return;
  std::printf("\nnon-chaotic cases (marked * above): their intervals describe no chaotic "
              "variability\n");
  for (std::int64_t c = 0; c < s.cases; ++c) {
    if (!non_chaotic(s, c)) continue;
    std::string params;
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      params += (a ? ", " : " (") + s.axes[a] + " " + number_text("%.6g", s.axis_values[a][c]);
    }
    if (!params.empty()) params += ")";
    std::printf("case %lld%s: %s\n", static_cast<long long>(c), params.c_str(),
                s.non_chaotic_reason[static_cast<std::size_t>(c)].c_str());
  }
}

/// The response slopes with the test of one linear fit, then the local slopes per case.
void print_response(const ArchiveSummary& s) {
  const std::size_t n_obs = s.observables.size(), cases = static_cast<std::size_t>(s.cases);
  const bool tested = s.linear_fit_pvalue.size() == s.axes.size() * n_obs;
  std::printf("\nresponse slope of the ensemble time mean, model units per unit of the "
              "parameter (least squares over the cases)%s\n",
              tested ? "; chi2/dof and p of weighted straight lines along the parameter (the "
                       "others fixed): a small p says one slope does not describe the response"
                     : "");
  std::vector<std::vector<std::string>> rows{{"observable", "parameter", "slope", "std error"}};
  if (tested) {
    rows[0].push_back("chi2/dof");
    rows[0].push_back("p (linear)");
  }
  std::vector<std::string> not_linear;
  for (std::size_t a = 0; a < s.axes.size(); ++a) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      const std::size_t i = idx(a, n_obs, o);
      rows.push_back({s.observables[o], s.axes[a], number_text("%.4g", s.slope[i]),
                      number_text("%.2g", s.slope_stderr[i])});
      if (!tested) continue;
      rows.back().push_back(number_text("%.3g", s.linear_fit_chi2[i]) + "/" +
                            std::to_string(s.linear_fit_dof[i]));
      rows.back().push_back(number_text("%.2g", s.linear_fit_pvalue[i]));
      if (s.linear_fit_pvalue[i] < 0.01) {
        not_linear.push_back(s.observables[o] + " along " + s.axes[a]);
      }
    }
  }
  print_aligned(rows);
  if (!not_linear.empty()) {
    std::string names;
    for (const std::string& n : not_linear) names += (names.empty() ? "" : ", ") + n;
    std::printf("not linear within the errors (p < 0.01): %s; read the local slopes below\n",
                names.c_str());
  }
  if (s.local_slope.size() != s.axes.size() * cases * n_obs) return;
  std::printf("\nlocal slope of the ensemble time mean at each case, along each parameter with "
              "the others fixed (central differences, one-sided at the ends of the axis): "
              "slope +- std error\n");
  if (s.pair_groups > 0) {
    std::printf("(paired cases: the errors include the correlation of the cases' means, "
                "estimated over %lld groups of members)\n", static_cast<long long>(s.pair_groups));
  }
  std::vector<std::vector<std::string>> local{{"case"}};
  for (const std::string& a : s.axes) local[0].push_back(a);
  for (const std::string& a : s.axes) {
    for (const std::string& o : s.observables) local[0].push_back("d" + o + "/d" + a);
  }
  for (std::size_t c = 0; c < cases; ++c) {
    std::vector<std::string> row{std::to_string(c)};
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      row.push_back(number_text("%.4g", s.axis_values[a][c]));
    }
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      for (std::size_t o = 0; o < n_obs; ++o) {
        const std::size_t i = (a * cases + c) * n_obs + o;
        row.push_back(number_text("%.4g", s.local_slope[i]) + " +- " +
                      number_text("%.2g", s.local_slope_stderr[i]));
      }
    }
    local.push_back(row);
  }
  print_aligned(local);
}

/// The response predicted from each case's fluctuations, beside the direct local slope where
/// the forcing is also swept.
void print_predicted(const ArchiveSummary& s) {
  const std::size_t n_obs = s.observables.size(), cases = static_cast<std::size_t>(s.cases);
  if (s.forcings.empty() || s.predicted_slope.size() != s.forcings.size() * cases * n_obs) return;
  std::printf("\nresponse of the ensemble time mean predicted from each case's own fluctuations "
              "(quasi-Gaussian fluctuation-dissipation relation): slope +- jackknife std "
              "error%s\n",
              s.local_slope.empty() ? "" : "; [direct] the local slope where the forcing is swept");
  std::vector<std::vector<std::string>> rows{{"case"}};
  for (const std::string& a : s.axes) rows[0].push_back(a);
  for (const std::string& p : s.forcings) {
    for (const std::string& o : s.observables) rows[0].push_back("d" + o + "/d" + p);
  }
  for (std::size_t c = 0; c < cases; ++c) {
    std::vector<std::string> row{std::to_string(c)};
    for (std::size_t a = 0; a < s.axes.size(); ++a) {
      row.push_back(number_text("%.4g", s.axis_values[a][c]));
    }
    for (std::size_t p = 0; p < s.forcings.size(); ++p) {
      const auto axis = std::find(s.axes.begin(), s.axes.end(), s.forcings[p]);
      const bool direct = axis != s.axes.end() && s.local_slope.size() == s.axes.size() * cases * n_obs;
      for (std::size_t o = 0; o < n_obs; ++o) {
        const std::size_t i = (p * cases + c) * n_obs + o;
        std::string text = number_text("%.4g", s.predicted_slope[i]) + " +- " +
                           number_text("%.2g", s.predicted_slope_stderr[i]);
        if (direct) {
          const std::size_t a = static_cast<std::size_t>(axis - s.axes.begin());
          text += " [" + number_text("%.4g", s.local_slope[(a * cases + c) * n_obs + o]) + "]";
        }
        row.push_back(text);
      }
    }
    rows.push_back(row);
  }
  print_aligned(rows);
}

void print_table(const ArchiveSummary& s) {
  std::int64_t valid = 0;
  for (std::int64_t v : s.valid_members) valid += v;
  std::printf("campaign %s: model %s, %lld case%s x %lld members, %lld of %lld members valid, "
              "archive %s\n",
              s.campaign.c_str(), s.model.c_str(), static_cast<long long>(s.cases),
              s.cases == 1 ? "" : "s",
              static_cast<long long>(s.members), static_cast<long long>(valid),
              static_cast<long long>(s.cases * s.members), s.status.c_str());
  for (const Shown& r : shown_results(s)) {
    const Quantity& q = *r.result.value;
    if (q.dims.size() == 2 && results::dimension(q.dims[1]).labels.empty()) {
      print_result_blocks(s, r);
    }
  }
  if (s.exponents > 0) {
    std::printf("Kaplan-Yorke dimension of the ensemble-mean exponents:");
    for (std::int64_t c = 0; c < s.cases; ++c) std::printf(" %.4g", kaplan_yorke(s, c));
    std::printf("  (by case; nan when the %d exponents do not reach it)\n", s.exponents);
  }
  if (s.twins) print_twins_table(s);
  print_non_chaotic(s);
  const SnapshotView snap = snapshot_view(s);
  if (!snap.times.empty()) {
    print_block(s, "snapshots of " + s.observables[0] + " across members at model time t (of " +
                       std::to_string(s.snapshot_time.size()) + " snapshot times): ensemble "
                       "mean [95% confidence interval of the mean]",
                snapshot_names(s, snap, " t=%g"), snap.mean, snap.ci95);
  }
  if (!s.axes.empty()) {
    print_response(s);
  }
  print_predicted(s);
  std::printf("\nunits: nondimensional model units; time in model time units. Intervals: "
              "mean +- t(0.975, n-1) se, n = valid members; se is the standard error below for "
              "time means, s / sqrt(n) (s the std across members) otherwise.\n");
  for (const std::string& a : s.axes) {
    if (a == s.scheduled_parameter) {
      std::printf("%s follows a schedule: its column holds the offset added to the schedule, "
                  "and its slopes are per unit of that offset.\n", a.c_str());
    }
  }
  if (!s.time_mean_stderr.empty()) {
    std::printf("Standard error of the ensemble mean (used for the slopes): the larger of "
                "s / sqrt(n) and sqrt(sum of the members' blocking standard errors^2) / n.\n");
  }
}

}  // namespace

int summary_command(const SummaryOptions& options) {
  const ArchiveSummary s = archive::read_summary(options.archive, !options.no_verify);
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
