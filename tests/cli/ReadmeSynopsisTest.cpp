// The README's command synopses ("## Commands") list every option of every
// command: each `--option` that `reachwise COMMAND --help` prints must
// appear in that command's synopsis, and the synopsis names no option the
// command lacks.
#include <gtest/gtest.h>

#include <map>
#include <regex>
#include <set>
#include <sstream>
#include <string>

#include "support/Cli.hpp"

namespace {

std::set<std::string> options(const std::string& text) {
  std::set<std::string> out;
  const std::regex option("--[a-z][a-z-]*");
  for (std::sregex_iterator it(text.begin(), text.end(), option), end; it != end; ++it) out.insert(it->str());
  return out;
}

/// The synopsis of each command: its `    reachwise CMD ...` line and the
/// indented lines that continue it, in the README's "## Commands" section.
std::map<std::string, std::string> synopses() {
  const std::string readme = testsupport::slurp(REACHWISE_SOURCE_DIR "/README.md");
  const auto from = readme.find("## Commands");
  EXPECT_NE(from, std::string::npos) << "README has no '## Commands' section";
  std::map<std::string, std::string> out;
  std::istringstream lines(readme.substr(from));
  std::string current;
  std::getline(lines, current);  // the heading
  current.clear();
  for (std::string line; std::getline(lines, line);) {
    if (line.rfind("## ", 0) == 0) break;
    if (line.rfind("    reachwise ", 0) == 0) {
      std::istringstream words(line);
      std::string word;
      words >> word >> current;
      out[current] += line + "\n";
    } else if (!current.empty() && line.rfind("        ", 0) == 0) {
      out[current] += line + "\n";
    } else {
      current.clear();
    }
  }
  return out;
}

}  // namespace

TEST(ReadmeSynopsis, ListsEveryOptionOfEveryCommand) {
  const auto readme = synopses();
  for (const std::string command : {"check", "route", "prepare", "calibrate", "demo", "synth"}) {
    const auto it = readme.find(command);
    ASSERT_NE(it, readme.end()) << "no synopsis for " << command;
    const auto help = testsupport::runReachwise(command + " --help");
    ASSERT_EQ(help.code, 0) << help.err;
    std::set<std::string> offered = options(help.out);
    offered.erase("--help");
    ASSERT_FALSE(offered.empty()) << command;
    const std::set<std::string> listed = options(it->second);
    for (const auto& o : offered) EXPECT_TRUE(listed.count(o)) << command << ": README synopsis lacks " << o;
    for (const auto& o : listed) EXPECT_TRUE(offered.count(o)) << command << ": README synopsis names " << o << ", which the command lacks";
  }
}
