#include "spec/suggest.hpp"

#include <algorithm>
#include <cctype>
#include <cstdio>

namespace chaosweep::spec {
namespace {

char fold(char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); }

/// Whether `text` holds `word` (case ignored) as one of its underscore-separated parts.
bool holds_part(const std::string& text, const std::string& word) {
  for (std::size_t at = 0; at + word.size() <= text.size(); ++at) {
    const bool starts = at == 0 || text[at - 1] == '_';
    const bool ends = at + word.size() == text.size() || text[at + word.size()] == '_';
    if (starts && ends &&
        std::equal(word.begin(), word.end(), text.begin() + static_cast<long>(at),
                   [](char a, char b) { return fold(a) == fold(b); })) {
      return true;
    }
  }
  return false;
}

/// Candidate list as "`a`, `b` or `c`".
std::string join_alternatives(const std::vector<std::string>& words, const char* last_sep) {
  std::string out;
  for (std::size_t i = 0; i < words.size(); ++i) {
    if (i > 0) out += (i + 1 == words.size()) ? last_sep : ", ";
    out += "`" + printable(words[i]) + "`";
  }
  return out;
}

}  // namespace

int edit_distance(const std::string& a, const std::string& b) {
  // d[i][j] = distance between the first i characters of a and the first j of b
  // (Damerau's restricted form: a transposed pair counts as one edit).
  const std::size_t n = a.size(), m = b.size();
  std::vector<std::vector<int>> d(n + 1, std::vector<int>(m + 1, 0));
  for (std::size_t i = 0; i <= n; ++i) d[i][0] = static_cast<int>(i);
  for (std::size_t j = 0; j <= m; ++j) d[0][j] = static_cast<int>(j);
  for (std::size_t i = 1; i <= n; ++i) {
    for (std::size_t j = 1; j <= m; ++j) {
      const int cost = fold(a[i - 1]) == fold(b[j - 1]) ? 0 : 1;
      d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost});
      if (i > 1 && j > 1 && fold(a[i - 1]) == fold(b[j - 2]) &&
          fold(a[i - 2]) == fold(b[j - 1])) {
        d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
      }
    }
  }
  return d[n][m];
}

std::vector<std::string> nearest(const std::string& word,
                                 const std::vector<std::string>& candidates) {
  // Allowed distance: 1 for words up to 5 characters, 2 up to 9, 3 beyond; never the whole
  // word (so that "x" does not suggest "n").
  const int len = static_cast<int>(word.size());
  const int allowed = std::min(len - 1, std::max(1, (len + 2) / 4));
  int best = allowed + 1;
  std::vector<std::string> out;
  for (const auto& c : candidates) {
    const int d = edit_distance(word, c);
    if (d > allowed) continue;
    if (d < best) {
      best = d;
      out.clear();
    }
    if (d == best && std::find(out.begin(), out.end(), c) == out.end()) out.push_back(c);
  }
  return out;
}

std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates,
                         const std::string& list_if_none) {
  auto near = nearest(word, candidates);
  if (near.size() > 3) near.resize(3);  // a short hint, not a catalogue
  if (!near.empty()) return "; did you mean " + join_alternatives(near, " or ") + "?";
  if (list_if_none.empty() || candidates.empty() || candidates.size() > 16) return "";
  return " (" + list_if_none + " " + join_alternatives(candidates, ", ") + ")";
}

std::string did_you_mean_qualified(const std::string& word,
                                   const std::vector<std::string>& candidates,
                                   const std::string& list_if_none) {
  if (!nearest(word, candidates).empty() || word.empty()) {
    return did_you_mean(word, candidates, list_if_none);
  }
  std::vector<std::string> holding;
  for (const auto& c : candidates) {
    if (c != word && holds_part(c, word)) holding.push_back(c);
  }
  if (holding.size() > 3) holding.resize(3);
  if (!holding.empty()) return "; did you mean " + join_alternatives(holding, " or ") + "?";
  return did_you_mean(word, candidates, list_if_none);
}

std::string printable(const std::string& text) {
  constexpr std::size_t kMax = 60;
  std::string out;
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (out.size() >= kMax) {
      out += "...";
      break;
    }
    const auto c = static_cast<unsigned char>(text[i]);
    if (c == '\n') {
      out += "\\n";
    } else if (c == '\t') {
      out += "\\t";
    } else if (c < 0x20 || c == 0x7f) {
      char buf[8];
      std::snprintf(buf, sizeof buf, "\\x%02x", c);
      out += buf;
    } else {
      out += static_cast<char>(c);
    }
  }
  return out;
}

}  // namespace chaosweep::spec
