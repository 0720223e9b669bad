// Routing a forecast ensemble two ways on one machine: members side by
// side, each on one thread (run::routeMembers, what `route --members`
// does), and members one after the other, each on every thread (the
// router's own parallelism over independent sub-trees). Routing only: the
// network and every member's forcing are read once before the clocks start,
// nothing is written. Not a Google Benchmark fixture: one timed pass of
// each, repeated REPEAT times, the fastest kept.
//
//   ensemble_bench NETWORK MEMBERS [LATERAL [THREADS [REPEAT [METHOD]]]]
//     MEMBERS: a folder or a quoted pattern of inflow forcing files
//     THREADS: default 2; REPEAT: default 3; METHOD: vpmc (default), mc, muskingum
#include <fmt/core.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <string>
#include <vector>

#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/run/Ensemble.hpp"

namespace {

using Clock = std::chrono::steady_clock;
double secondsSince(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

}  // namespace

int main(int argc, char** argv) {
  using namespace reachwise;
  if (argc < 3) {
    fmt::print(stderr, "usage: ensemble_bench NETWORK MEMBERS [LATERAL [THREADS [REPEAT [METHOD]]]]\n");
    return 2;
  }
  run::RouteRequest request;
  request.network.path = argv[1];
  request.members = argv[2];
  if (argc > 3) request.forcing.lateral = argv[3];
  const unsigned threads = argc > 4 ? static_cast<unsigned>(std::atoi(argv[4])) : 2;
  const int repeat = argc > 5 ? std::max(1, std::atoi(argv[5])) : 3;
  if (argc > 6) request.method = run::methodFromName(argv[6]).value_or(routing::Method::VariableParameter);
  request.outputs.hydrographs = "outlets";
  const run::Ensemble e(request);
  std::vector<std::uint32_t> all(e.size());
  for (std::uint32_t m = 0; m < all.size(); ++m) all[m] = m;
  fmt::print("{} reaches, {} steps, {} members, {} thread(s), method {}\n", e.plan().size(), e.axis().steps, e.size(),
             threads, run::methodName(request.method));

  double side_by_side = 1e300, one_after_other = 1e300;
  for (int r = 0; r < repeat; ++r) {
    auto t0 = Clock::now();
    const auto members = run::routeMembers(e, all, threads);
    side_by_side = std::min(side_by_side, secondsSince(t0));
    t0 = Clock::now();
    for (std::uint32_t m = 0; m < e.size(); ++m) {
      routing::NetworkRouteOptions ro = run::networkRouteOptions(e.network(), e.plan(), request.method,
                                                                 request.diffusion_below_ponce,
                                                                 request.grid_spread_budget, threads);
      std::vector<routing::LakeRouting> lakes;
      ro.lake_results = &lakes;
      (void)routing::routeNetwork(e.plan(), e.axis(), e.forcing(m).provider(), ro, nullptr);
    }
    one_after_other = std::min(one_after_other, secondsSince(t0));
  }
  fmt::print("members side by side, one thread each:      {:8.3f} s\n", side_by_side);
  fmt::print("members one after the other, {} thread(s):   {:8.3f} s\n", threads, one_after_other);
  return 0;
}
