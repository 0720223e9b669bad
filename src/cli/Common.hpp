#pragma once
// What every subcommand shares: turning errors into exit codes.

#include <CLI/CLI.hpp>

#include <cstddef>
#include <functional>
#include <iosfwd>
#include <string>

namespace reachwise::cli {

/// Most worker threads `--threads` (and the run file's `threads`) accept:
/// far beyond any machine's cores, below what the threading library warns
/// about.
inline constexpr unsigned kMostThreads = 4096;
/// Largest `--max-steps`: 1e10 steps of 8 bytes is 80 GB per series.
inline constexpr std::size_t kMostSteps = 10'000'000'000;

/// CLI11 check of `--dt`: a finite number of seconds, at least
/// routing::TimeAxis::kMinStep_s (refuses nan, inf, 0, 1e-15).
CLI::Validator timeStepCheck();

/// The help text of `--threads`.
std::string threadsHelp();

/// Adds `--diffusion-below` and `--spread-budget` (vpmc's hand-over to the
/// diffusion wave and its grid on quick reaches) to `sub`, into the two
/// values given.
void addVpmcOptions(CLI::App& sub, double& diffusion_below, double& spread_budget);

/// Runs `body`; a reachwise::Error becomes one line on `err` and exit 1,
/// anything else an internal-error line and exit 3. `subject` names what
/// was being worked on, for the out-of-memory message.
int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body);

}  // namespace reachwise::cli
