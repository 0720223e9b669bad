#pragma once
// How a subcommand plugs into main(): `addXCommand(app, chosen)` adds its
// options to the CLI11 app; when the user picks it, parsing stores in
// `chosen` the function that runs it and returns the exit code
// (0 ok, 1 bad input, 2 usage; README.md, "Commands").

#include <functional>

namespace reachwise::cli {

using Runner = std::function<int()>;

/// Exit codes shared by every subcommand.
inline constexpr int kExitOk = 0;
inline constexpr int kExitInput = 1;
inline constexpr int kExitUsage = 2;
inline constexpr int kExitBug = 3;

}  // namespace reachwise::cli
