// The reachwise command: parses arguments, calls the library, reports.
#include <CLI/CLI.hpp>
#include <fmt/core.h>

#include <exception>

#include "CheckCommand.hpp"
#include "CalibrateCommand.hpp"
#include "PrepareCommand.hpp"
#include "RouteCommand.hpp"
#include "Subcommand.hpp"
#include "SynthCommand.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/version.hpp"

int main(int argc, char** argv) {
  CLI::App app{"reachwise: route flood hydrographs through a river network read from GIS data"};
  app.set_version_flag("--version", std::string("reachwise ") + reachwise::kVersion + " (" +
                                        reachwise::kGitHash + ")");
  app.require_subcommand(0, 1);
  reachwise::cli::Runner chosen;
  reachwise::cli::addCheckCommand(app, chosen);
  std::string command_line = "reachwise";
  for (int i = 1; i < argc; ++i) command_line += std::string(" ") + argv[i];
  reachwise::cli::addRouteCommand(app, chosen, command_line);
  reachwise::cli::addDemoCommand(app, chosen, command_line);
  reachwise::cli::addSynthCommand(app, chosen);
  reachwise::cli::addPrepareCommand(app, chosen);
  reachwise::cli::addCalibrateCommand(app, chosen);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? 0 : reachwise::cli::kExitUsage;
  }
  if (!chosen) {  // no command: the help, on stderr, as a usage error
    fmt::print(stderr, "{}", app.help());
    return reachwise::cli::kExitUsage;
  }
  try {
    return chosen();
  } catch (const std::exception& e) {
    fmt::print(stderr, "internal error (please report): {}\n", e.what());
    return reachwise::cli::kExitBug;
  }
}
