#include "Common.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <new>
#include <ostream>

#include "Subcommand.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::cli {

CLI::Validator timeStepCheck() {
  return CLI::Validator(
      [](std::string& text) -> std::string {
        double dt = 0;
        try {
          std::size_t used = 0;
          dt = std::stod(text, &used);
          if (used != text.size()) return "'" + text + "' is not a number of seconds";
        } catch (const std::exception&) {
          return "'" + text + "' is not a number of seconds";
        }
        if (!std::isfinite(dt) || !(dt >= routing::TimeAxis::kMinStep_s))
          return fmt::format("the time step must be a finite number of seconds, at least {} s (got {})",
                             routing::TimeAxis::kMinStep_s, text);
        return {};
      },
      "SECONDS");
}

std::string threadsHelp() { return fmt::format("Worker threads, 1 to {} (default: all cores)", kMostThreads); }

void addVpmcOptions(CLI::App& sub, double& diffusion_below, double& spread_budget) {
  sub.add_option("--diffusion-below", diffusion_below,
                 fmt::format("vpmc routes reaches whose Ponce number is below this with the diffusion wave "
                             "(default {}; 0: never)", routing::kDiffusionWaveMinPonce))
      ->check(CLI::NonNegativeNumber);
  sub.add_option("--spread-budget", spread_budget,
                 fmt::format("vpmc on quick reaches: diffusion its grid may add, as a fraction of the distance the "
                             "wave moves while it rises (default {}; 0: the grid of the reference flow)",
                             routing::kGridSpreadBudget))
      ->check(CLI::Range(0.0, routing::kMaxGridSpreadBudget));
}

int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body) {
  try {
    return body();
  } catch (const InternalError& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  } catch (const Error& e) {
    fmt::print(err, "error: {}\n", e.what());
    return kExitInput;
  } catch (const std::bad_alloc&) {
    fmt::print(err, "error: out of memory while working on {}\n", subject);
    return kExitInput;
  } catch (const std::exception& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  }
}

}  // namespace reachwise::cli
