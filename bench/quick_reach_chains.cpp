// Chains of quick reaches: the accuracy matrix's reaches at S0 = 0.005 and
// 0.001 (tests/support/AccuracyMatrix.hpp), cut into chains of reaches of
// about 500 m (0.2 to 0.8 km), shorter than the 2-3 km a wave moves in the
// matrix's 15-minute step, as a network cuts a river. `vpmc`'s outflow at
// the end of the chain against the converged diffusion-wave reference of
// the whole length, for each grid spread budget given (RouteOptions::
// grid_spread_budget; 0 = the grid of the reference flow), with the cells
// per step the chain costs. Measures; asserts nothing
// (tests/routing/AccuracyTest.cpp, QuickReachChainAccuracy, does).
//
// With --lateral: single quick reaches (0.5, 1.5 and 3 km of the matrix's
// rectangle and trapezoid at S0 = 0.005 and 0.001) fed by the sharp wave
// as lateral inflow over hourly steps, on base flow from the top, against
// the reference with the same lateral inflow: peak and the shift of the
// event's centroid (its mean time above base flow), in minutes.
//
//   build/bench/quick_reach_chains                 # budgets 0 and the default
//   build/bench/quick_reach_chains 0 0.001 0.003   # those budgets
//   build/bench/quick_reach_chains --lateral 0 0.01
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "reachwise/routing/ReachRouter.hpp"
#include "support/AccuracyMatrix.hpp"

using namespace testsupport::accuracy;

namespace {

void lateralRows(const std::vector<double>& budgets) {
  std::printf("| case | budget | cells/step | peak %% | centroid shift, min | reference delay of the centroid, min |\n");
  std::printf("|---|---|---|---|---|---|\n");
  for (const Case& c : lateralRowCases()) {
    for (const double length : kLateralLengths) {
      const LateralCase lc = lateralCase(c, length);
      for (const double b : budgets) {
        reachwise::routing::RouteOptions o;
        o.grid_spread_budget = b;
        const LateralFigures f = measureLateral(c, lc, o);
        std::printf("| %s S0 = %g, %.1f km | %g | %u | %+.2f | %+.1f | %.1f |\n", c.section_name, c.slope,
                    length / 1000, b, f.cells, f.peak_pct, f.shift_s / 60, f.reference_delay_s / 60);
        std::fflush(stdout);
      }
    }
  }
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<double> budgets;
  bool lateral = false;
  for (int i = 1; i < argc; ++i) {
    if (std::string(argv[i]) == "--lateral") lateral = true;
    else budgets.push_back(std::atof(argv[i]));
  }
  if (budgets.empty()) budgets = {0.0, reachwise::routing::RouteOptions{}.grid_spread_budget};
  if (lateral) {
    lateralRows(budgets);
    return 0;
  }
  std::printf("| case | reaches | budget | cells/step | peak %% | time %% of travel | event volume %% | dip %% | overshoot %% | targets |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|\n");
  for (const Case& c : matrixCasesWhere([](const Case& c) { return c.slope >= 0.001 && c.length_m >= 20000; })) {
    const Reference r = solveReference(c, testRefinement());
    const std::vector<double> lengths = chainLengths(c.length_m, 500.0);
    for (const double b : budgets) {
      reachwise::routing::RouteOptions o;
      o.grid_spread_budget = b;
      const Figures f = measureChain(c, r, lengths, o);
      std::string missed;
      for (const std::string& m : missedTargets(c, f)) missed += m + "; ";
      std::printf("| %s | %zu | %g | %.0f | %+.2f | %+.2f | %+.2f | %.2f | %.2f | %s |\n", c.name().c_str(),
                  lengths.size(), b, f.cells, f.peak_pct, f.time_pct, f.volume_pct, f.dip_pct, f.overshoot_pct,
                  missed.empty() ? "met" : missed.c_str());
      std::fflush(stdout);
    }
  }
}
