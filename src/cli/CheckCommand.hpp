#pragma once
// `reachwise check NETWORK [--layer NAME] [--config FILE] [--problems OUT.gpkg]`:
// reads and validates a network, prints a summary and one line per problem.

#include <CLI/CLI.hpp>

#include <iosfwd>
#include <string>

#include "Subcommand.hpp"

namespace reachwise::cli {

struct CheckOptions {
  std::string network;   ///< path or connection string
  std::string layer;     ///< empty: the only line layer
  std::string config;    ///< TOML run file, empty: defaults
  std::string problems;  ///< GeoPackage to write, empty: none
  std::string lakes = {};  ///< polygon source of lakes, empty: the config's (if any)
  std::string lakes_layer = {};
};

/// Runs the check; summary to `out`, problems (one per line) to `err`.
/// Returns 0 (no errors; warnings allowed), 1 (the input has errors or
/// cannot be read) or 3 (an internal error). Never throws.
int runCheck(const CheckOptions& options, std::ostream& out, std::ostream& err);

/// Adds the `check` subcommand to `app`.
void addCheckCommand(CLI::App& app, Runner& chosen);

}  // namespace reachwise::cli
