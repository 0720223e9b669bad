// The reachwise command: parses arguments, calls the library, reports.
#include <CLI/CLI.hpp>
#include <fmt/core.h>

#include <exception>
#include <memory>

#include "CheckCommand.hpp"
#include "CalibrateCommand.hpp"
#include "PrepareCommand.hpp"
#include "RouteCommand.hpp"
#include "Subcommand.hpp"
#include "SynthCommand.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/version.hpp"
#ifdef REACHWISE_MPI
#include "reachwise/parallel/MpiRanks.hpp"
#endif

namespace {

/// The MPI ranks when an MPI launcher started this process (`mpirun -n N
/// reachwise route ...`); null otherwise, or in a build without MPI.
std::unique_ptr<reachwise::routing::Ranks> launchRanks([[maybe_unused]] int& argc, [[maybe_unused]] char**& argv) {
#ifdef REACHWISE_MPI
  if (reachwise::parallel::launchedByMpi()) return std::make_unique<reachwise::parallel::MpiRanks>(&argc, &argv);
#endif
  return nullptr;
}

}  // namespace

int main(int argc, char** argv) {
  std::unique_ptr<reachwise::routing::Ranks> ranks;
  try {
    ranks = launchRanks(argc, argv);
  } catch (const std::exception& e) {
    fmt::print(stderr, "error: {}\n", e.what());
    return reachwise::cli::kExitBug;
  }
  const bool speaks = !ranks || ranks->rank() == 0;
  CLI::App app{"reachwise: route flood hydrographs through a river network read from GIS data"};
  app.set_version_flag("--version", std::string("reachwise ") + reachwise::kVersion + " (" +
                                        reachwise::kGitHash + ")");
  app.require_subcommand(0, 1);
  reachwise::cli::Runner chosen;
  reachwise::cli::addCheckCommand(app, chosen);
  std::string command_line = "reachwise";
  for (int i = 1; i < argc; ++i) command_line += std::string(" ") + argv[i];
  reachwise::cli::addRouteCommand(app, chosen, command_line, ranks.get());
  reachwise::cli::addDemoCommand(app, chosen, command_line, ranks.get());
  reachwise::cli::addSynthCommand(app, chosen);
  reachwise::cli::addPrepareCommand(app, chosen);
  reachwise::cli::addCalibrateCommand(app, chosen);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (!speaks) return e.get_exit_code() == 0 ? 0 : reachwise::cli::kExitUsage;
    return app.exit(e) == 0 ? 0 : reachwise::cli::kExitUsage;
  }
  if (!chosen) {  // no command: the help, on stderr, as a usage error
    if (speaks) fmt::print(stderr, "{}", app.help());
    return reachwise::cli::kExitUsage;
  }
  if (ranks && ranks->size() > 1 && !app.got_subcommand("route") && !app.got_subcommand("demo")) {
    if (speaks)
      fmt::print(stderr, "error: only `route` and `demo` run across MPI ranks; run this command without mpirun "
                         "(or with one rank)\n");
    return reachwise::cli::kExitUsage;
  }
  try {
    return chosen();
  } catch (const std::exception& e) {
    fmt::print(stderr, "internal error (please report): {}\n", e.what());
    return reachwise::cli::kExitBug;
  }
}
