// Edit distance and did-you-mean hints.
#include <gtest/gtest.h>

#include "spec/suggest.hpp"

namespace {

using chaosweep::spec::did_you_mean;
using chaosweep::spec::did_you_mean_qualified;
using chaosweep::spec::edit_distance;
using chaosweep::spec::nearest;
using chaosweep::spec::printable;

// from memory: the classic Levenshtein example kitten -> sitting takes 3 edits
// (k->s, e->i, insert g); no transposition helps, so the restricted form agrees.
TEST(EditDistance, ClassicExample) { EXPECT_EQ(edit_distance("kitten", "sitting"), 3); }

// exact (by enumeration of edits): an adjacent transposition is one edit in the restricted
// (optimal string alignment) form; "ca" -> "abc" is 3 there (2 in the unrestricted form,
// which may edit a transposed pair again).
TEST(EditDistance, TranspositionIsOneEdit) {
  EXPECT_EQ(edit_distance("membres", "members"), 1);
  EXPECT_EQ(edit_distance("ca", "abc"), 3);
}

// exact: distance to the empty string is the length; case is ignored by design.
TEST(EditDistance, EmptyAndCase) {
  EXPECT_EQ(edit_distance("", "seed"), 4);
  EXPECT_EQ(edit_distance("seed", ""), 4);
  EXPECT_EQ(edit_distance("Lorenz63", "lorenz63"), 0);
}

TEST(Suggest, NearMissesOnly) {
  const std::vector<std::string> keys = {"members", "initial_state", "perturbation", "seed"};
  EXPECT_EQ(nearest("membres", keys), std::vector<std::string>{"members"});
  EXPECT_EQ(nearest("intial_state", keys), std::vector<std::string>{"initial_state"});
  EXPECT_TRUE(nearest("colour", keys).empty());
  // A one-letter word is never "near" a different one-letter word.
  EXPECT_TRUE(nearest("x", {"n", "F"}).empty());
  EXPECT_EQ(nearest("f", {"n", "F"}), std::vector<std::string>{"F"});
}

TEST(Suggest, MessageFragments) {
  EXPECT_EQ(did_you_mean("seeds", {"members", "seed"}), "; did you mean `seed`?");
  EXPECT_EQ(did_you_mean("qqq", {"a", "b"}), " (expected one of `a`, `b`)");
  EXPECT_EQ(did_you_mean("qqq", {"a", "b"}, ""), "");
  EXPECT_EQ(did_you_mean("lorenz36", {"lorenz63", "lorenz96"}),
            "; did you mean `lorenz63` or `lorenz96`?");
}

// Common practice for qualified names: a bare part (`mean`) points at the names that hold it
// as a whole underscore-separated part, and only when no name is a near miss.
TEST(Suggest, QualifiedNames) {
  const std::vector<std::string> ring = {"x0", "x1", "site_mean", "energy"};
  EXPECT_EQ(did_you_mean_qualified("mean", ring), "; did you mean `site_mean`?");
  EXPECT_EQ(did_you_mean_qualified("MEAN", ring), "; did you mean `site_mean`?");
  EXPECT_EQ(did_you_mean_qualified("site_meen", ring), "; did you mean `site_mean`?");
  EXPECT_EQ(did_you_mean_qualified("energi", ring), "; did you mean `energy`?");
  // a part must be whole: `ean` is inside `site_mean` but not one of its parts
  EXPECT_EQ(did_you_mean_qualified("ean", ring, ""), "");
  EXPECT_EQ(did_you_mean_qualified("site", ring, ""), "; did you mean `site_mean`?");
}

TEST(Suggest, PrintableKeepsOneLine) {
  EXPECT_EQ(printable("a\nb\tc"), "a\\nb\\tc");
  EXPECT_EQ(printable(std::string(100, 'k')).size(), 63u);  // 60 characters and "..."
}

}  // namespace
