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
//   build/bench/quick_reach_chains                 # budgets 0 and the default
//   build/bench/quick_reach_chains 0 0.001 0.003   # those budgets
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "reachwise/routing/ReachRouter.hpp"
#include "support/AccuracyMatrix.hpp"

using namespace testsupport::accuracy;

int main(int argc, char** argv) {
  std::vector<double> budgets;
  for (int i = 1; i < argc; ++i) budgets.push_back(std::atof(argv[i]));
  if (budgets.empty()) budgets = {0.0, reachwise::routing::RouteOptions{}.grid_spread_budget};
  std::printf("| case | reaches | budget | cells/step | peak %% | time %% of travel | event volume %% | dip %% | overshoot %% | targets |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|\n");
  for (const Case& c : matrixCasesWhere([](const Case& c) { return c.slope >= 0.001 && c.length_m >= 20000; })) {
    ref::Refinement refinement;
    refinement.tolerance = 2e-3;
    refinement.min_levels = 2;
    const Reference r = solveReference(c, refinement);
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
