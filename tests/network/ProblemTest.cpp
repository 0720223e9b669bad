// The problem code table: complete, unique names, and the same codes and
// severities as the documented interface (docs/formats.md, "Problem codes").
#include <gtest/gtest.h>

#include <cctype>
#include <fstream>
#include <map>
#include <regex>
#include <set>
#include <string>

#include "reachwise/network/Problem.hpp"

using namespace reachwise::network;

namespace {

std::string severityText(Severity s) {
  switch (s) {
    case Severity::Info: return "info";
    case Severity::Warning: return "warning";
    case Severity::Error: return "error";
  }
  return "?";
}

/// Code name -> severity, from every "| `code` | severity | ..." row of the docs.
std::map<std::string, std::string> documentedCodes() {
  std::ifstream in(std::string(REACHWISE_SOURCE_DIR) + "/docs/formats.md");
  EXPECT_TRUE(in) << "docs/formats.md not found";
  const std::regex row(R"(^\| `([a-z_]+)` \| (error|warning|info) \|)");
  std::map<std::string, std::string> out;
  std::string line;
  std::smatch m;
  while (std::getline(in, line)) {
    if (!std::regex_search(line, m, row)) continue;
    const auto [it, fresh] = out.emplace(m[1], m[2]);
    EXPECT_TRUE(fresh || it->second == m[2]) << m[1] << " is documented with two severities";
  }
  return out;
}

}  // namespace

TEST(ProblemCodes, TableHasOneRowPerCodeWithAUniqueName) {
  const auto kinds = problemKinds();
  ASSERT_EQ(kinds.size(), kProblemCodeCount);
  std::set<std::string_view> names;
  for (std::size_t i = 0; i < kinds.size(); ++i) {
    const auto code = static_cast<ProblemCode>(i);
    EXPECT_EQ(kinds[i].code, code);
    EXPECT_EQ(&kindOf(code), &kinds[i]);
    EXPECT_TRUE(names.insert(kinds[i].name).second) << kinds[i].name << " is used twice";
    EXPECT_FALSE(kinds[i].summary.empty()) << kinds[i].name;
    // Names are written to outputs as identifiers: lower case and '_' only.
    ASSERT_FALSE(kinds[i].name.empty());
    for (const char c : kinds[i].name)
      EXPECT_TRUE(std::islower(static_cast<unsigned char>(c)) || c == '_') << kinds[i].name;
  }
}

TEST(ProblemCodes, NamesAndSeveritiesAreThoseDocumented) {
  const auto documented = documentedCodes();
  std::set<std::string> in_table;
  for (const auto& kind : problemKinds()) {
    const std::string name(kind.name);
    in_table.insert(name);
    const auto it = documented.find(name);
    ASSERT_NE(it, documented.end()) << name << " is not in docs/formats.md";
    EXPECT_EQ(it->second, severityText(kind.severity)) << name;
  }
  for (const auto& [name, severity] : documented)
    EXPECT_TRUE(in_table.count(name)) << name << " is documented but not a ProblemCode";
}

TEST(ProblemCodes, AProblemTakesItsCodesSeverityAndName) {
  const Problem p(ProblemCode::FlippedLine, "line R3 reversed");
  EXPECT_EQ(p.codeName(), "flipped_line");  // the name in docs/formats.md
  EXPECT_EQ(p.severity, Severity::Warning);
  EXPECT_EQ(p.fid, -1);
  EXPECT_FALSE(hasErrors({p}));
  EXPECT_TRUE(hasErrors({p, Problem(ProblemCode::Cycle, "R1, R2")}));
}
