#pragma once
// `reachwise route` and `reachwise demo`.

#include <CLI/CLI.hpp>

#include <string>

#include "Subcommand.hpp"
#include "reachwise/routing/Ranks.hpp"

namespace reachwise::cli {

/// `command_line` is the whole invocation, recorded in `run_info`.
/// `ranks`: the MPI ranks this process routes with (null: alone); rank 0
/// prints and writes, the others print nothing.
void addRouteCommand(CLI::App& app, Runner& chosen, const std::string& command_line, routing::Ranks* ranks);
void addDemoCommand(CLI::App& app, Runner& chosen, const std::string& command_line, routing::Ranks* ranks);

}  // namespace reachwise::cli
