// Every invalid fixture is refused with the expected one-line message.
//
// tests/fixtures/specs/invalid/EXPECTED.tsv lists, per fixture: file name, the expected
// LINE:COL, and a fragment the message must contain (TAB-separated; '#' lines are comments).
// Each row becomes one test; a further test checks that the table and the folder agree.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <set>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "spec/load.hpp"

namespace {

const std::string kInvalidDir = std::string(CHAOSWEEP_FIXTURES) + "/specs/invalid";

struct Expected {
  std::string file;
  std::string line_col;  // "LINE:COL"
  std::string fragment;
};

// Shown by GoogleTest instead of the raw bytes of the struct.
void PrintTo(const Expected& e, std::ostream* os) { *os << e.file; }

std::vector<Expected> read_table() {
  std::vector<Expected> rows;
  std::ifstream in(kInvalidDir + "/EXPECTED.tsv");
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    const auto tab1 = line.find('\t');
    const auto tab2 = line.find('\t', tab1 + 1);
    if (tab1 == std::string::npos || tab2 == std::string::npos) {
      rows.push_back({"<malformed row: " + line + ">", "", ""});
      continue;
    }
    rows.push_back({line.substr(0, tab1), line.substr(tab1 + 1, tab2 - tab1 - 1),
                    line.substr(tab2 + 1)});
  }
  return rows;
}

class InvalidSpec : public ::testing::TestWithParam<Expected> {};

TEST_P(InvalidSpec, RefusedWithPositionAndMessage) {
  const Expected& e = GetParam();
  ASSERT_FALSE(e.line_col.empty()) << e.file;
  const std::string path = kInvalidDir + "/" + e.file;
  try {
    chaosweep::spec::load_spec(path);
    FAIL() << path << " was accepted";
  } catch (const chaosweep::SpecError& err) {
    const std::string message = err.what();
    const std::string prefix = path + ":" + e.line_col + ": ";
    EXPECT_EQ(message.rfind(prefix, 0), 0u) << "expected prefix " << prefix << "\n got "
                                            << message;
    EXPECT_NE(message.find(e.fragment), std::string::npos)
        << "expected fragment " << e.fragment << "\n got " << message;
    EXPECT_EQ(message.find('\n'), std::string::npos) << message;
    EXPECT_EQ(err.exit_code(), chaosweep::kExitInvalid);
  }
}

std::string test_name(const ::testing::TestParamInfo<Expected>& info) {
  std::string name;
  for (char c : info.param.file) {
    if (c == '.') break;
    name += std::isalnum(static_cast<unsigned char>(c)) ? c : '_';
  }
  return name.empty() ? "row" + std::to_string(info.index) : name;
}

INSTANTIATE_TEST_SUITE_P(Fixtures, InvalidSpec, ::testing::ValuesIn(read_table()), test_name);

// The table lists every fixture of the folder exactly once, and nothing else.
TEST(InvalidSpecTable, MatchesTheFolder) {
  std::set<std::string> listed;
  for (const auto& row : read_table()) {
    EXPECT_TRUE(listed.insert(row.file).second) << row.file << " listed twice";
  }
  std::set<std::string> present;
  for (const auto& entry : std::filesystem::directory_iterator(kInvalidDir)) {
    if (entry.path().extension() == ".yaml") present.insert(entry.path().filename().string());
  }
  EXPECT_EQ(listed, present);
  EXPECT_GE(present.size(), 25u);
}

}  // namespace
