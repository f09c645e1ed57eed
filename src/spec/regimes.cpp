// statistics.regimes and observable names.
#include "spec/sections.hpp"
#include "spec/suggest.hpp"

namespace chaosweep::spec {
namespace {

/// Refuses `key` when present: it belongs to the other kind of regime classification.
void refuse_key(const Map& map, const std::string& key, const std::string& kind) {
  if (map.has(key)) {
    fail_at(map.field().source(), map.key_location(key), child_path(map.field().path(), key),
            "`" + key + "` applies only to regimes of kind " + kind);
  }
}

/// Labels: one non-empty, distinct string per regime, or `defaults` when not given.
std::vector<std::string> read_labels(const Map& map, std::vector<std::string> defaults) {
  if (!map.has("labels")) return defaults;
  const Field field = map.get("labels");
  const auto items = field.items();
  if (items.size() != defaults.size()) {
    field.fail("expected " + std::to_string(defaults.size()) + " labels, one per regime, got " +
               std::to_string(items.size()));
  }
  std::vector<std::string> labels;
  for (const auto& item : items) {
    const std::string label = item.string();
    if (label.empty()) item.fail("a label must not be empty");
    for (const auto& earlier : labels) {
      if (earlier == label) item.fail("label `" + printable(label) + "` is used twice");
    }
    labels.push_back(label);
  }
  return labels;
}

/// Centroids: at least two, each a point with one value per coordinate, all distinct.
std::vector<std::vector<double>> read_centroids(const Field& field,
                                                const std::vector<std::string>& coordinates) {
  const auto items = field.items();
  if (items.size() < 2) {
    field.fail("expected at least 2 centroids, got " + std::to_string(items.size()));
  }
  std::vector<std::vector<double>> centroids;
  for (const auto& item : items) {
    auto point = item.numbers();
    if (point.size() != coordinates.size()) {
      std::string names;
      for (std::size_t i = 0; i < coordinates.size() && i < 6; ++i) {
        names += (i ? ", " : "") + coordinates[i];
      }
      if (coordinates.size() > 6) names += ", ...";
      item.fail("centroid has " + std::to_string(point.size()) + " values; expected " +
                std::to_string(coordinates.size()) + ", one per coordinate (" + names + ")");
    }
    for (std::size_t j = 0; j < centroids.size(); ++j) {
      if (centroids[j] == point) {
        item.fail("centroid repeats centroid " + std::to_string(j) +
                  "; regimes need distinct centroids");
      }
    }
    centroids.push_back(std::move(point));
  }
  return centroids;
}

void read_sign(const Map& map, const ModelFacts& facts, Regimes& out) {
  refuse_key(map, "centroids", "nearest");
  refuse_key(map, "coordinates", "nearest");
  out.kind = RegimeKind::sign;
  out.observable = read_observable(map.required("observable"), facts);
  out.labels = read_labels(map, {"positive", "negative"});
}

void read_nearest(const Map& map, const ModelFacts& facts, Regimes& out) {
  refuse_key(map, "observable", "sign");
  out.kind = RegimeKind::nearest;
  if (map.has("coordinates")) {
    out.coordinates = read_observable_names(map.get("coordinates"), facts);
  } else {
    out.coordinates.assign(facts.observables.begin(),
                           facts.observables.begin() + facts.state_dim);
  }
  out.centroids = read_centroids(map.required("centroids"), out.coordinates);
  std::vector<std::string> defaults;
  for (std::size_t i = 0; i < out.centroids.size(); ++i) {
    defaults.push_back("regime" + std::to_string(i));
  }
  out.labels = read_labels(map, defaults);
}

}  // namespace

std::string read_observable(const Field& name, const ModelFacts& facts) {
  const std::string value = name.string();
  for (const auto& o : facts.observables) {
    if (o == value) return value;
  }
  name.fail(facts.info->name + " has no observable `" + printable(value) + "`" +
            did_you_mean_qualified(value, facts.observables, "it has"));
}

std::vector<std::string> read_observable_names(const Field& list, const ModelFacts& facts) {
  std::vector<std::string> names;
  for (const auto& item : list.items()) {
    const std::string name = read_observable(item, facts);
    for (const auto& earlier : names) {
      if (earlier == name) item.fail("observable `" + name + "` is listed twice");
    }
    names.push_back(name);
  }
  if (names.empty()) list.fail("expected at least one observable");
  return names;
}

void read_regimes(const Field& regimes, const ModelFacts& facts, Regimes& out) {
  const Map map(regimes, {{"kind", "observable", "labels", "centroids", "coordinates"}, {}, "key",
                          ""});
  const std::string kind = map.required("kind").choice({"sign", "nearest"}, "regime kind");
  if (kind == "sign") {
    read_sign(map, facts, out);
  } else {
    read_nearest(map, facts, out);
  }
}

}  // namespace chaosweep::spec
