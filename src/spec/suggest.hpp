// "Did you mean" suggestions for misspelt keys, model, parameter and observable names.
// Pure: no YAML, no I/O.
#pragma once

#include <string>
#include <vector>

namespace chaosweep::spec {

/// Optimal-string-alignment distance between `a` and `b`, ignoring ASCII case: the number of
/// single-character insertions, deletions, substitutions and adjacent transpositions.
int edit_distance(const std::string& a, const std::string& b);

/// The candidates nearest to `word`, in candidate order, when that distance is small for a
/// word of its length (at most about a third of its characters); empty when none is close.
std::vector<std::string> nearest(const std::string& word,
                                 const std::vector<std::string>& candidates);

/// "; did you mean `x`?" (or "`x` or `y`") for a near miss, otherwise "" when
/// `list_if_none` is empty, or " (expected one of a, b, c)" listing the candidates.
std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates,
                         const std::string& list_if_none = "expected one of");

/// As did_you_mean(), but when no candidate is a near miss, also suggests the candidates that
/// hold `word` as one of their underscore-separated parts (`mean` -> `site_mean`): for names
/// of quantities, where a short generic word is often the last part of a qualified name.
std::string did_you_mean_qualified(const std::string& word,
                                   const std::vector<std::string>& candidates,
                                   const std::string& list_if_none = "expected one of");

/// `text` made printable on one line: control characters escaped, at most 60 characters.
std::string printable(const std::string& text);

}  // namespace chaosweep::spec
