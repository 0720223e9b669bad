#pragma once
// Test support: running the built `reachwise` program and capturing what it
// prints, for the end-to-end command tests.

#include <sys/wait.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>

#include "support/Scratch.hpp"

namespace testsupport {

struct CliRun {
  int code = -1;          ///< exit status (-1: did not exit normally)
  std::string out, err;   ///< what it printed on stdout and stderr
};

inline std::string slurp(const std::filesystem::path& p) {
  std::ifstream in(p);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

/// Runs a shell command and captures what it prints. The captured output
/// goes to files beside, not inside, the test's scratch folder, so a
/// TempDir of the same name is left alone.
inline CliRun runShell(const std::string& cmd) {
  const std::string base = (std::filesystem::temp_directory_path() / uniqueTestName()).string();
  const std::filesystem::path out = base + ".stdout", err = base + ".stderr";
  const int status = std::system((cmd + " > " + out.string() + " 2> " + err.string()).c_str());
  CliRun r;
  r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  std::filesystem::remove(out);
  std::filesystem::remove(err);
  return r;
}

/// Runs `reachwise ARGS` (ARGS as a shell would split them).
inline CliRun runReachwise(const std::string& args) {
  return runShell(std::string(REACHWISE_BINARY_DIR) + "/reachwise " + args);
}

/// `s` in single quotes for the shell, inner single quotes kept.
inline std::string shellQuoted(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

/// The value of one row of a command's summary on stdout (`key   value`),
/// or "<missing>".
inline std::string summaryValue(const std::string& out, const std::string& key) {
  const std::regex row("(^|\n)" + key + " +([^\n]*)");
  std::smatch m;
  return std::regex_search(out, m, row) ? m[2].str() : std::string("<missing>");
}

}  // namespace testsupport
