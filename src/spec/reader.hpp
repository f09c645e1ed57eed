// Strict reading of YAML nodes for the spec loader: typed values with their key path and
// position, maps checked for unknown and duplicate keys. Every failure throws SpecError with
// the one-line message "SOURCE:LINE:COL: key.path: what is wrong".
// Internal to spec/ (the only yaml-cpp user).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include <yaml-cpp/yaml.h>

#include "spec/spec.hpp"

namespace chaosweep::spec {

/// Throws SpecError "SOURCE:LINE:COL: PATH: MESSAGE" (without "PATH: " when path is empty).
/// Control characters in the message are escaped so that it stays on one line.
[[noreturn]] void fail_at(const std::string& source, Location where, const std::string& path,
                          const std::string& message);

/// 1-based position of a node, or `fallback` when yaml-cpp has none (a null mark).
Location location_of(const YAML::Node& node, Location fallback);

/// Shortest decimal text that reads back as exactly `value` (for messages).
std::string format_number(double value);

/// One value of the spec: a YAML node, where it is and its key path ("ensemble.members",
/// "sweep[0].values[2]").
class Field {
 public:
  Field(const std::string* source, YAML::Node node, std::string path, Location where)
      : source_(source), node_(std::move(node)), path_(std::move(path)), where_(where) {}

  const std::string& path() const { return path_; }
  Location where() const { return where_; }
  const YAML::Node& node() const { return node_; }
  const std::string& source() const { return *source_; }

  [[noreturn]] void fail(const std::string& message) const;

  bool is_map() const { return node_.IsMap(); }
  bool is_list() const { return node_.IsSequence(); }
  /// What the node is, for "expected X, got Y" messages: "a map", "a list", "nothing", ...
  std::string kind() const;

  /// A finite decimal number (NaN, infinities, quoted strings, overflow refused).
  double number() const;
  /// A number that is also >= min (inclusive) or > min (exclusive).
  double number_at_least(double min) const;
  double number_above(double min) const;
  /// An integer written as one (no decimal point or exponent), within int64.
  std::int64_t integer() const;
  /// An integer within [min, max].
  std::int64_t integer_in(std::int64_t min, std::int64_t max) const;
  /// A non-negative integer within uint64.
  std::uint64_t unsigned_integer() const;
  /// Any scalar as text (not null, not a map or list).
  std::string string() const;
  /// A string that is one of `choices` (with a did-you-mean otherwise).
  std::string choice(const std::vector<std::string>& choices, const std::string& noun) const;

  /// Elements of a list, each with path "PATH[i]".
  std::vector<Field> items() const;
  /// A list of finite numbers / of strings.
  std::vector<double> numbers() const;
  std::vector<std::string> strings() const;

 private:
  const std::string& scalar_text(const char* expected) const;

  const std::string* source_;
  YAML::Node node_;
  std::string path_;
  Location where_;
};

/// A YAML map whose keys have been checked: every key a plain scalar, no duplicates, every
/// key known (unknown ones get a did-you-mean), and keys of features not implemented yet
/// refused with "`KEY` is not supported by this version yet".
class Map {
 public:
  struct Keys {
    std::vector<std::string> known;
    std::vector<std::string> unsupported;
    std::string noun = "key";  // "parameter" for model.parameters
    std::string owner;         // "in ensemble"; default from the path
  };

  Map(const Field& field, const Keys& keys);

  const Field& field() const { return field_; }
  bool has(const std::string& key) const;
  /// The value under `key`; throws "missing required key `KEY`" at the map when absent.
  Field required(const std::string& key) const;
  /// The value under a key known to be present (check has() first).
  Field get(const std::string& key) const;
  /// Keys in document order.
  const std::vector<std::string>& keys() const { return order_; }
  /// The position of a key itself (for errors about the key rather than its value).
  Location key_location(const std::string& key) const;

 private:
  Field field_;
  std::vector<std::string> order_;
  std::vector<Location> key_where_;
};

/// "PARENT.KEY", or "KEY" at the top level.
std::string child_path(const std::string& parent, const std::string& key);

}  // namespace chaosweep::spec
