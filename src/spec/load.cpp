// Strict loading of a campaign spec: YAML text -> validated, complete Spec.
#include "spec/load.hpp"

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <sstream>

#include <yaml-cpp/eventhandler.h>
#include <yaml-cpp/yaml.h>

#include "core/error.hpp"
#include "core/sha256.hpp"
#include "spec/reader.hpp"
#include "spec/sections.hpp"

namespace chaosweep::spec {
namespace {

/// YAML forbids tabs in indentation; a tab in the leading whitespace of any line with content
/// (comment lines aside) is refused up front with a clear message. This also covers lines of a
/// block scalar (`description: |`), where a leading tab would be content: use spaces there.
void refuse_tab_indentation(const std::string& text, const std::string& source) {
  int line = 1;
  std::size_t start = 0;
  while (start < text.size()) {
    std::size_t end = text.find('\n', start);
    if (end == std::string::npos) end = text.size();
    const std::size_t content = text.find_first_not_of(" \t\r", start);
    if (content < end && text[content] != '#') {
      const std::size_t tab = text.find('\t', start);
      if (tab < content) {
        fail_at(source, Location{line, static_cast<int>(tab - start) + 1}, "",
                "tab character in indentation; YAML indentation must use spaces");
      }
    }
    start = end + 1;
    ++line;
  }
}

/// Records where each document of a YAML stream starts (its first token) and where its first
/// node is, without building the nodes.
class DocumentStarts : public YAML::EventHandler {
 public:
  std::vector<YAML::Mark> starts;  // per document: its first token
  std::vector<YAML::Mark> nodes;   // per document: its root node (null mark if none seen)

  void OnDocumentStart(const YAML::Mark& mark) override {
    starts.push_back(mark);
    nodes.push_back(YAML::Mark::null_mark());
  }
  void OnDocumentEnd() override {}
  void OnNull(const YAML::Mark& mark, YAML::anchor_t) override { node(mark); }
  void OnAlias(const YAML::Mark& mark, YAML::anchor_t) override { node(mark); }
  void OnScalar(const YAML::Mark& mark, const std::string&, YAML::anchor_t,
                const std::string&) override {
    node(mark);
  }
  void OnSequenceStart(const YAML::Mark& mark, const std::string&, YAML::anchor_t,
                       YAML::EmitterStyle::value) override {
    node(mark);
  }
  void OnSequenceEnd() override {}
  void OnMapStart(const YAML::Mark& mark, const std::string&, YAML::anchor_t,
                  YAML::EmitterStyle::value) override {
    node(mark);
  }
  void OnMapEnd() override {}

 private:
  void node(const YAML::Mark& mark) {
    if (!nodes.empty() && nodes.back().is_null()) nodes.back() = mark;
  }
};

Location location_of_mark(const YAML::Mark& mark) {
  return Location{mark.line < 0 ? 0 : mark.line + 1, mark.column < 0 ? 0 : mark.column + 1};
}

[[noreturn]] void fail_syntax(const std::string& source, const YAML::Exception& e) {
  fail_at(source, location_of_mark(e.mark), "", "YAML syntax error: " + e.msg);
}

/// Refuses a stream that is empty or holds more than one document. At most three documents
/// are read: yaml-cpp does not consume a token that cannot start a node (a `,` outside a flow
/// collection, as in `[a], b`) and would return the same empty document at that token forever,
/// so a document that starts where the previous one started is a syntax error at that token.
void require_one_document(const std::string& text, const std::string& source) {
  std::istringstream stream(text);
  YAML::Parser parser(stream);
  DocumentStarts documents;
  try {
    for (int read = 0; read < 3 && parser.HandleNextDocument(documents); ++read) {
      const std::vector<YAML::Mark>& s = documents.starts;
      if (s.size() >= 2 && s[s.size() - 1].pos == s[s.size() - 2].pos) {
        const YAML::Mark& stuck = s.back();
        const char c = stuck.pos >= 0 && static_cast<std::size_t>(stuck.pos) < text.size()
                           ? text[static_cast<std::size_t>(stuck.pos)]
                           : '?';
        const std::string shown = c > ' ' && c < 127 ? "`" + std::string(1, c) + "`" : "token";
        fail_at(source, location_of_mark(stuck), "",
                "YAML syntax error: unexpected " + shown + " where a value or key should start");
      }
    }
  } catch (const YAML::Exception& e) {
    fail_syntax(source, e);
  }
  if (documents.starts.empty()) fail_at(source, Location{1, 1}, "", "the spec is empty");
  if (documents.starts.size() > 1) {
    const YAML::Mark& second =
        documents.nodes[1].is_null() ? documents.starts[1] : documents.nodes[1];
    fail_at(source, location_of_mark(second), "",
            "a spec holds one YAML document; a second one starts here");
  }
}

/// The one YAML document of the spec; syntax errors, an empty file and a second document are
/// SpecErrors.
YAML::Node parse_document(const std::string& text, const std::string& source) {
  require_one_document(text, source);
  try {
    return YAML::Load(text);
  } catch (const YAML::Exception& e) {
    fail_syntax(source, e);
  }
}

/// An HDF5 file keeps its signature at byte 0 or at 512, 1024, 2048, ... (after a user block).
bool has_hdf5_signature(const std::string& bytes) {
  static const std::string signature("\x89HDF\r\n\x1a\n", 8);
  for (std::size_t at = 0; at + signature.size() <= bytes.size(); at = at == 0 ? 512 : 2 * at) {
    if (bytes.compare(at, signature.size(), signature) == 0) return true;
  }
  return false;
}

/// Refuses a file that cannot be YAML text (an archive given in place of its spec, say) with
/// one line that says what it is, rather than a syntax error somewhere inside it.
void refuse_binary(const std::string& text, const std::string& path) {
  if (has_hdf5_signature(text)) {
    const bool archive = text.rfind("chaosweep archive\n", 0) == 0;
    throw UsageError(path + " is " +
                     (archive ? std::string("a chaosweep archive (HDF5), not a campaign spec; the "
                                            "spec it was run from is its root attribute spec_yaml")
                              : std::string("an HDF5 file, not a campaign spec (YAML text)")));
  }
  const std::size_t nul = text.find('\0');
  if (nul != std::string::npos) {
    throw UsageError(path + " is not a text file (a NUL byte at offset " + std::to_string(nul) +
                     "); a campaign spec is YAML text");
  }
}

}  // namespace

Spec parse_spec(const std::string& text, const std::string& source_name) {
  Spec spec;
  spec.source_path = source_name;
  spec.text = text;
  spec.sha256 = sha256_hex(text);
  refuse_tab_indentation(text, source_name);
  const YAML::Node root = parse_document(text, source_name);
  const Field top_field(&source_name, root, "", location_of(root, Location{1, 1}));
  if (!root.IsMap()) top_field.fail("the top level must be a map of sections, got " + top_field.kind());
  const Map top(top_field, {{"campaign", "model", "sweep", "ensemble", "integration",
                             "statistics", "output", "checkpoint", "run", "schedule", "noise"},
                            {}, "key", ""});
  read_campaign(top.required("campaign"), spec);
  ModelFacts facts = read_model(top.required("model"), spec);
  if (top.has("schedule")) {  // a sweep of the scheduled parameter holds offsets
    spec.schedule.parameter = scheduled_parameter(top.get("schedule"));
  }
  if (top.has("sweep")) read_sweep(top.get("sweep"), facts, spec);
  if (top.has("schedule")) read_schedule(top.get("schedule"), top.required("model"), facts, spec);
  read_integration(top.required("integration"), facts, spec);
  read_ensemble(top.required("ensemble"), facts, spec);
  if (top.has("noise")) read_noise(top.get("noise"), facts, spec);
  if (top.has("statistics")) read_statistics(top.get("statistics"), facts, spec);
  if (spec.statistics.observables.empty()) spec.statistics.observables = facts.observables;
  read_output(top.required("output"), spec);
  if (top.has("checkpoint")) read_checkpoint(top.get("checkpoint"), spec);
  if (top.has("run")) read_run(top.get("run"), spec);
  check_method_features(spec);
  return spec;
}

Spec load_spec(const std::string& path) {
  std::FILE* file = std::fopen(path.c_str(), "rb");
  if (!file) throw UsageError("cannot read spec " + path + ": " + std::strerror(errno));
  std::string text;
  char buffer[65536];
  std::size_t n = 0;
  while ((n = std::fread(buffer, 1, sizeof buffer, file)) > 0) text.append(buffer, n);
  int error = 0;
  if (std::ferror(file) != 0) error = errno != 0 ? errno : EIO;
  if (std::fclose(file) != 0 && error == 0) error = errno != 0 ? errno : EIO;
  if (error != 0) throw UsageError("cannot read spec " + path + ": " + std::strerror(error));
  refuse_binary(text, path);
  return parse_spec(text, path);
}

}  // namespace chaosweep::spec
