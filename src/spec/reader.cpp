#include "spec/reader.hpp"

#include <cctype>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <regex>

#include "core/error.hpp"
#include "spec/suggest.hpp"

namespace chaosweep::spec {
namespace {

// YAML 1.2 core-schema decimal numbers; hexadecimal, octal and sexagesimal forms are refused.
const std::regex& decimal_number() {
  static const std::regex re(R"([-+]?(\.[0-9]+|[0-9]+(\.[0-9]*)?)([eE][-+]?[0-9]+)?)");
  return re;
}
const std::regex& decimal_integer() {
  static const std::regex re(R"([-+]?[0-9]+)");
  return re;
}

/// True for the spellings of NaN and infinity (.nan, .inf, -.Inf, nan, inf, infinity, ...).
bool is_nan_or_inf(std::string text) {
  for (auto& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (!text.empty() && (text[0] == '+' || text[0] == '-')) text.erase(0, 1);
  if (!text.empty() && text[0] == '.') text.erase(0, 1);
  return text == "nan" || text == "inf" || text == "infinity";
}

}  // namespace

void fail_at(const std::string& source, Location where, const std::string& path,
             const std::string& message) {
  std::string text = source + ":" + std::to_string(where.line) + ":" +
                     std::to_string(where.column) + ": ";
  if (!path.empty()) text += path + ": ";
  text += message;
  for (auto& c : text) {
    if (c == '\n' || c == '\r') c = ' ';  // guard: messages are one line
  }
  throw SpecError(text);
}

Location location_of(const YAML::Node& node, Location fallback) {
  const YAML::Mark mark = node.Mark();
  if (mark.line < 0 || mark.column < 0) return fallback;
  return Location{mark.line + 1, mark.column + 1};
}

std::string format_number(double value) {
  char buf[64];
  const auto result = std::to_chars(buf, buf + sizeof buf, value);  // shortest round trip
  return std::string(buf, result.ptr);
}

std::string child_path(const std::string& parent, const std::string& key) {
  return parent.empty() ? key : parent + "." + key;
}

void Field::fail(const std::string& message) const { fail_at(*source_, where_, path_, message); }

std::string Field::kind() const {
  switch (node_.Type()) {
    case YAML::NodeType::Map: return "a map";
    case YAML::NodeType::Sequence: return "a list";
    case YAML::NodeType::Scalar:
      return node_.Tag() == "!" ? "the string \"" + printable(node_.Scalar()) + "\""
                                : "`" + printable(node_.Scalar()) + "`";
    case YAML::NodeType::Null:
    case YAML::NodeType::Undefined: break;
  }
  return "nothing";
}

const std::string& Field::scalar_text(const char* expected) const {
  if (!node_.IsScalar()) fail(std::string("expected ") + expected + ", got " + kind());
  const std::string& tag = node_.Tag();
  if (tag != "?" && tag != "!") fail("YAML tags (`" + printable(tag) + "`) are not allowed here");
  return node_.Scalar();
}

double Field::number() const {
  const std::string& text = scalar_text("a number");
  if (node_.Tag() == "!") fail("expected a number, got " + kind());
  if (is_nan_or_inf(text)) fail("NaN and infinity are not allowed; expected a finite number");
  if (!std::regex_match(text, decimal_number())) fail("expected a number, got " + kind());
  const double value = std::strtod(text.c_str(), nullptr);
  if (!std::isfinite(value)) fail("number " + printable(text) + " is out of range");
  return value;
}

double Field::number_at_least(double min) const {
  const double v = number();
  if (!(v >= min)) fail("must be at least " + format_number(min) + ", got " + format_number(v));
  return v;
}

double Field::number_above(double min) const {
  const double v = number();
  if (!(v > min)) fail("must be greater than " + format_number(min) + ", got " + format_number(v));
  return v;
}

std::int64_t Field::integer() const {
  const std::string& text = scalar_text("an integer");
  if (node_.Tag() == "!") fail("expected an integer, got " + kind());
  if (is_nan_or_inf(text)) fail("NaN and infinity are not allowed; expected an integer");
  if (!std::regex_match(text, decimal_integer())) {
    fail("expected an integer, got " + kind());
  }
  errno = 0;
  const long long value = std::strtoll(text.c_str(), nullptr, 10);
  if (errno == ERANGE) fail("integer " + printable(text) + " is out of range");
  return value;
}

std::int64_t Field::integer_in(std::int64_t min, std::int64_t max) const {
  const std::int64_t v = integer();
  if (v < min) fail("must be at least " + std::to_string(min) + ", got " + std::to_string(v));
  if (v > max) fail("must be at most " + std::to_string(max) + ", got " + std::to_string(v));
  return v;
}

std::uint64_t Field::unsigned_integer() const {
  const std::string& text = scalar_text("a non-negative integer");
  if (node_.Tag() == "!" || is_nan_or_inf(text) || !std::regex_match(text, decimal_integer())) {
    fail("expected a non-negative integer, got " + kind());
  }
  if (text[0] == '-' && text.find_first_not_of("-0") != std::string::npos) {
    fail("must be a non-negative integer, got " + printable(text));
  }
  errno = 0;
  const unsigned long long value = std::strtoull(text.c_str(), nullptr, 10);
  if (errno == ERANGE) fail("integer " + printable(text) + " is out of range (at most 2^64-1)");
  return value;
}

std::string Field::string() const { return scalar_text("a string"); }

std::string Field::choice(const std::vector<std::string>& choices,
                          const std::string& noun) const {
  const std::string value = string();
  for (const auto& c : choices) {
    if (c == value) return value;
  }
  fail("unknown " + noun + " `" + printable(value) + "`" + did_you_mean(value, choices));
}

std::vector<Field> Field::items() const {
  if (!node_.IsSequence()) fail("expected a list, got " + kind());
  std::vector<Field> out;
  for (std::size_t i = 0; i < node_.size(); ++i) {
    const YAML::Node item = node_[i];
    out.emplace_back(source_, item, path_ + "[" + std::to_string(i) + "]",
                     location_of(item, where_));
  }
  return out;
}

std::vector<double> Field::numbers() const {
  std::vector<double> out;
  for (const auto& item : items()) out.push_back(item.number());
  return out;
}

std::vector<std::string> Field::strings() const {
  std::vector<std::string> out;
  for (const auto& item : items()) out.push_back(item.string());
  return out;
}

Map::Map(const Field& field, const Keys& keys) : field_(field) {
  if (!field.is_map()) field.fail("expected a map, got " + field.kind());
  const std::string owner =
      !keys.owner.empty() ? keys.owner
                          : field.path().empty() ? "at the top level" : "in " + field.path();
  for (auto it = field.node().begin(); it != field.node().end(); ++it) {
    const YAML::Node key = it->first;
    const Field key_field(&field.source(), key, field.path(), location_of(key, field.where()));
    if (!key.IsScalar() || (key.Tag() != "?" && key.Tag() != "!")) {
      key_field.fail("keys must be plain names, got " + key_field.kind());
    }
    const std::string name = key.Scalar();
    const std::string path = child_path(field.path(), name);
    const Location where = key_field.where();
    for (std::size_t i = 0; i < order_.size(); ++i) {
      if (order_[i] == name) {
        fail_at(field.source(), where, path,
                "duplicate key `" + printable(name) + "` " + owner + " (first given at line " +
                    std::to_string(key_where_[i].line) + ")");
      }
    }
    for (const auto& u : keys.unsupported) {
      if (u == name) {
        fail_at(field.source(), where, path,
                "`" + name + "` is not supported by this version yet");
      }
    }
    bool known = false;
    for (const auto& k : keys.known) known = known || k == name;
    if (!known) {
      fail_at(field.source(), where, path,
              "unknown " + keys.noun + " `" + printable(name) + "` " + owner +
                  did_you_mean(name, keys.known));
    }
    order_.push_back(name);
    key_where_.push_back(where);
  }
}

bool Map::has(const std::string& key) const {
  for (const auto& k : order_) {
    if (k == key) return true;
  }
  return false;
}

Location Map::key_location(const std::string& key) const {
  for (std::size_t i = 0; i < order_.size(); ++i) {
    if (order_[i] == key) return key_where_[i];
  }
  return field_.where();
}

Field Map::get(const std::string& key) const {
  for (auto it = field_.node().begin(); it != field_.node().end(); ++it) {
    if (it->first.Scalar() == key) {
      // An empty value ("archive:") has yaml-cpp's position of the next token: use the key's.
      const YAML::Node value = it->second;
      const Location at_key = key_location(key);
      return Field(&field_.source(), value, child_path(field_.path(), key),
                   value.IsNull() ? at_key : location_of(value, at_key));
    }
  }
  field_.fail("internal error: key `" + key + "` read before checking it is present");
}

Field Map::required(const std::string& key) const {
  if (!has(key)) field_.fail("missing required key `" + key + "`");
  return get(key);
}

}  // namespace chaosweep::spec
