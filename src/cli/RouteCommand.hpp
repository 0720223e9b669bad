#pragma once
// `reachwise route` and `reachwise demo`.

#include <CLI/CLI.hpp>

#include <string>

#include "Subcommand.hpp"

namespace reachwise::cli {

/// `command_line` is the whole invocation, recorded in `run_info`.
void addRouteCommand(CLI::App& app, Runner& chosen, const std::string& command_line);
void addDemoCommand(CLI::App& app, Runner& chosen, const std::string& command_line);

}  // namespace reachwise::cli
