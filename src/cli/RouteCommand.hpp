#pragma once
// `reachwise route` and `reachwise demo`.

#include <CLI/CLI.hpp>

#include "Subcommand.hpp"

namespace reachwise::cli {

void addRouteCommand(CLI::App& app, Runner& chosen);
void addDemoCommand(CLI::App& app, Runner& chosen);

}  // namespace reachwise::cli
