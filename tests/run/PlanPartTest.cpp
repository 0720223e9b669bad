// A part of a plan routed on its own (network::planPart with
// routing::PartForcing) against the whole plan routed at once: the
// reference is the whole-network routing, which shares nothing with the
// part but the reach router. The only difference allowed is the order of
// the sum at the part's boundary nodes (upstream outflows, then point
// inflow, against point inflow plus boundary outflow): a few units in the
// last place, so 1e-12 relative.
#include "reachwise/network/PlanPart.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/routing/PartForcing.hpp"
#include "reachwise/run/Calibrate.hpp"
#include "reachwise/run/Forcing.hpp"
#include "reachwise/run/Gauges.hpp"
#include "reachwise/run/Network.hpp"

using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

std::vector<std::uint32_t> allReaches(const network::NetworkPlan& plan) {
  std::vector<std::uint32_t> all(plan.size());
  for (std::uint32_t r = 0; r < plan.size(); ++r) all[r] = r;
  return all;
}

}  // namespace

TEST(PlanPart, KeepsLinksInsideAndHandsInTheOnesFromOutside) {
  // 0 → 2, 1 → 2, 2 → 3 (0.7) and 2 → 4 (0.3): a bifurcation below 2.
  network::NetworkPlan plan;
  plan.reach_id = {"a", "b", "c", "d", "e"};
  plan.length_m = {1, 2, 3, 4, 5};
  plan.up_offset = {0, 0, 0, 2, 3, 4};
  plan.up_reach = {0, 1, 2, 2};
  plan.up_fraction = {1, 1, 0.7, 0.3};
  plan.down_offset = {0, 1, 2, 4, 4, 4};
  plan.down_reach = {2, 2, 3, 4};
  const network::PlanPart part = network::planPart(plan, {1, 2, 4});
  EXPECT_EQ(part.plan.reach_id, (std::vector<std::string>{"b", "c", "e"}));
  EXPECT_EQ(part.plan.length_m, (std::vector<double>{2, 3, 5}));
  EXPECT_TRUE(part.plan.muskingum_k_s.empty());  // empty columns stay empty
  EXPECT_EQ(part.plan.up_offset, (std::vector<std::uint32_t>{0, 0, 1, 2}));
  EXPECT_EQ(part.plan.up_reach, (std::vector<std::uint32_t>{0, 1}));
  EXPECT_EQ(part.plan.up_fraction, (std::vector<double>{1, 0.3}));
  EXPECT_EQ(part.plan.down_offset, (std::vector<std::uint32_t>{0, 1, 2, 2}));
  EXPECT_EQ(part.plan.down_reach, (std::vector<std::uint32_t>{1, 2}));
  ASSERT_EQ(part.boundary.size(), 1u);
  EXPECT_EQ(part.boundary[0].reach, 1u);  // "c" takes all of "a"
  EXPECT_EQ(part.boundary[0].from, 0u);
  EXPECT_EQ(part.boundary[0].fraction, 1.0);
  EXPECT_THROW((void)network::planPart(plan, {2, 1}), std::invalid_argument);
  EXPECT_THROW((void)network::planPart(plan, {1, 1}), std::invalid_argument);
  EXPECT_THROW((void)network::planPart(plan, {5}), std::invalid_argument);
}

TEST(PlanPart, RoutedAloneItGivesWhatTheWholeNetworkGives) {
  run::NetworkSource source{kSample + "network.gpkg", "", "", ""};
  const auto net = run::loadNetwork(source);
  const network::NetworkPlan plan = run::routablePlan(*net);
  const run::RunForcing forcing({kSample + "inflow.csv", kSample + "lateral.csv", {}}, plan);
  routing::NetworkRouteOptions options;
  options.threads = 1;
  options.base_flow_m3s = run::baseFlows(plan);
  run::OutflowCapture whole(plan.size(), allReaches(plan));
  (void)routing::routeNetwork(plan, forcing.axis(), forcing.provider(), options, &whole);

  // The outlet's sub-basin below a gauge in the middle of the network.
  const auto outlet = static_cast<std::uint32_t>(plan.size() - 1);
  std::uint32_t mid = 0;
  for (std::uint32_t r = 0; r < plan.size(); ++r)
    if (run::subBasins(plan, {r}).front().size() * 2 <= plan.size() &&
        run::subBasins(plan, {r}).front().size() > run::subBasins(plan, {mid}).front().size())
      mid = r;
  const auto below = run::subBasins(plan, {mid, outlet})[1];
  const network::PlanPart part = network::planPart(plan, below);
  ASSERT_FALSE(part.boundary.empty());
  const routing::PartForcing part_forcing(forcing.provider(), part,
                                          [&](std::uint32_t from) -> const std::vector<double>& {
                                            return whole.outflow(from);
                                          });
  routing::NetworkRouteOptions part_options = options;
  part_options.base_flow_m3s = run::baseFlows(part.plan);
  run::OutflowCapture alone(part.plan.size(), allReaches(part.plan));
  (void)routing::routeNetwork(part.plan, forcing.axis(), part_forcing, part_options, &alone);
  for (std::uint32_t r = 0; r < part.plan.size(); ++r) {
    const auto& a = alone.outflow(r);
    const auto& w = whole.outflow(part.whole[r]);
    ASSERT_EQ(a.size(), w.size());
    double worst = 0;
    for (std::size_t n = 0; n < a.size(); ++n)
      worst = std::max(worst, std::abs(a[n] - w[n]) / std::max(1.0, std::abs(w[n])));
    EXPECT_LT(worst, 1e-12) << part.plan.reach_id[r];
  }
}
