// Synthetic networks: determinism, tree structure (checked with the project's
// graph and independently with Boost.Graph), downstream trends of the
// attributes, line ends that agree with the links, and the storm forcing
// against the closed-form volume of a gamma pulse.
#include "reachwise/network/SyntheticNetwork.hpp"

#include <gtest/gtest.h>

#include <boost/graph/adjacency_list.hpp>
#include <boost/graph/topological_sort.hpp>

#include <algorithm>
#include <cmath>
#include <iterator>
#include <numeric>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"
#include "network/SyntheticFixtures.hpp"

using namespace reachwise::network;
using reachwise::InvalidParameter;

namespace {

using synthfixture::make;

/// Upstream-first order by Boost.Graph's topological_sort (an independent
/// reference for the project's own graph code); throws not_a_dag on a cycle.
std::vector<std::size_t> boostUpstreamFirst(const SyntheticNetwork& net) {
  using G = boost::adjacency_list<boost::vecS, boost::vecS, boost::directedS>;
  G g(net.size());
  for (std::size_t i = 0; i < net.size(); ++i)
    if (net.downstream[i] != kSyntheticOutlet) boost::add_edge(i, net.downstream[i], g);
  std::vector<std::size_t> reversed;
  boost::topological_sort(g, std::back_inserter(reversed));  // sinks first
  return {reversed.rbegin(), reversed.rend()};
}

}  // namespace

TEST(SyntheticNetwork, SameSeedSameNetworkOtherSeedAnother) {
  const auto a = make(2000, 7), b = make(2000, 7), c = make(2000, 8);
  EXPECT_EQ(a.downstream, b.downstream);
  EXPECT_EQ(a.slope, b.slope);
  EXPECT_EQ(a.bottom_width_m, b.bottom_width_m);
  ASSERT_EQ(a.vertices.size(), b.vertices.size());
  for (std::size_t k = 0; k < a.vertices.size(); ++k) {
    EXPECT_EQ(a.vertices[k].x, b.vertices[k].x);
    EXPECT_EQ(a.vertices[k].y, b.vertices[k].y);
  }
  EXPECT_NE(a.downstream, c.downstream);
  EXPECT_NE(a.length_m, c.length_m);
}

TEST(SyntheticNetwork, ExactlyTheRequestedCountOfReachesAndOutlets) {
  for (std::size_t n : {1u, 2u, 3u, 7u, 10u, 999u, 1000u, 1001u}) {
    const auto net = make(n, 3);
    EXPECT_EQ(net.size(), n);
    EXPECT_EQ(net.outlets().size(), 1u) << n;
    EXPECT_EQ(net.vertex_begin.size(), n + 1);
  }
  const auto net = make(5000, 3, 4);
  EXPECT_EQ(net.size(), 5000u);
  EXPECT_EQ(net.outlets().size(), 4u);
}

TEST(SyntheticNetwork, RefusesImpossibleRequests) {
  EXPECT_THROW(make(0, 1), InvalidParameter);
  EXPECT_THROW(make(100, 1, 0), InvalidParameter);
  EXPECT_THROW(make(100, 1, 11), InvalidParameter);  // the grid is 10 wide
  EXPECT_NO_THROW(make(100, 1, 10));
}

TEST(SyntheticNetwork, ATreeByTheProjectGraphWithoutProblems) {
  const auto net = make(3000, 11, 3);
  const ReachTable table = toReachTable(net);
  const ReachGraph graph(table);
  const ProblemList problems = validate(graph);
  std::size_t non_info = 0;
  for (const auto& p : problems) non_info += p.severity != Severity::Info;
  EXPECT_EQ(non_info, 0u);
  EXPECT_TRUE(graph.topologicalOrder().has_value());
  EXPECT_EQ(graph.outlets().size(), 3u);
  EXPECT_EQ(graph.bifurcations().size(), 0u);
  EXPECT_EQ(graph.components().count, 3u);
  EXPECT_EQ(graph.linkCount(), 3000u - 3u);  // a forest of 3 trees: n - 3 links
}

TEST(SyntheticNetwork, AcyclicAndEveryReachDrainsToAnOutletByBoostGraph) {
  const auto net = make(4000, 5, 2);
  std::vector<std::size_t> order;
  ASSERT_NO_THROW(order = boostUpstreamFirst(net));
  ASSERT_EQ(order.size(), net.size());
  // Walking down from any reach ends at an outlet in fewer than n steps.
  for (std::size_t i = 0; i < net.size(); ++i) {
    std::size_t at = i, steps = 0;
    while (net.downstream[at] != kSyntheticOutlet && steps <= net.size()) {
      at = net.downstream[at];
      ++steps;
    }
    ASSERT_EQ(net.downstream[at], kSyntheticOutlet) << "reach " << i;
  }
}

TEST(SyntheticNetwork, SlopeFallsWidthGrowsAndContributingLengthAddsUpDownstream) {
  const auto net = make(5000, 9);
  // Contributing length recomputed in Boost.Graph's order: own + upstream.
  std::vector<double> up(net.size(), 0.0);
  for (std::size_t i : boostUpstreamFirst(net)) {
    up[i] += net.length_m[i];
    if (net.downstream[i] != kSyntheticOutlet) up[net.downstream[i]] += up[i];
  }
  for (std::size_t i = 0; i < net.size(); ++i) {
    EXPECT_NEAR(net.upstream_length_m[i], up[i], 1e-6 * up[i]);
    const std::uint32_t d = net.downstream[i];
    if (d == kSyntheticOutlet) continue;
    EXPECT_LE(net.slope[d], net.slope[i]) << i;
    EXPECT_GE(net.bottom_width_m[d], net.bottom_width_m[i]) << i;
  }
  // The trend is real, not only the clamp: the outlet is far flatter and
  // wider than a headwater (power laws with exponent 0.5 over L_up).
  const std::uint32_t outlet = net.outlets().front();
  const double l_ratio = net.upstream_length_m[outlet] / 2000.0;
  EXPECT_GT(net.bottom_width_m[outlet], 0.5 * std::sqrt(l_ratio));
  EXPECT_LT(net.slope[outlet], 0.01);
}

TEST(SyntheticNetwork, AttributesInPlausibleRanges) {
  const auto net = make(5000, 2);
  for (std::size_t i = 0; i < net.size(); ++i) {
    // Reach lengths 0.5-5 km and 0.025-0.06 for natural channels (Chow 1959,
    // from memory); 1-1000 m widths; banks 1.5-3 H:1V (common practice).
    EXPECT_GE(net.length_m[i], 500.0) << i;
    EXPECT_LE(net.length_m[i], 5000.0) << i;
    EXPECT_GE(net.manning_n[i], 0.025);
    EXPECT_LE(net.manning_n[i], 0.06);
    EXPECT_GE(net.bottom_width_m[i], 1.0);
    EXPECT_LE(net.bottom_width_m[i], 1000.0);
    EXPECT_GE(net.side_slope[i], 1.5);
    EXPECT_LE(net.side_slope[i], 3.0);
    EXPECT_GT(net.slope[i], 0.0);
    EXPECT_LE(net.slope[i], 0.03);
    const auto line = net.line(i);
    EXPECT_GE(line.size(), 2u);
    EXPECT_LE(line.size(), 4u);
  }
}

TEST(SyntheticNetwork, LineEndsAgreeWithTheLinks) {
  const auto net = make(3000, 4);
  for (std::size_t i = 0; i < net.size(); ++i) {
    const auto line = net.line(i);
    double length = 0;
    for (std::size_t k = 1; k < line.size(); ++k)
      length += std::hypot(line[k].x - line[k - 1].x, line[k].y - line[k - 1].y);
    EXPECT_NEAR(net.length_m[i], length, 1e-9 * length);
    if (net.downstream[i] == kSyntheticOutlet) continue;
    const auto down = net.line(net.downstream[i]);
    EXPECT_EQ(line.back().x, down.front().x) << i;
    EXPECT_EQ(line.back().y, down.front().y) << i;
  }
}

TEST(SyntheticStorm, BaseFlowBeforeTheStormScalesWithReachLength) {
  const auto net = make(500, 1);
  reachwise::routing::TimeAxis axis;
  axis.steps = 100;
  axis.dt_s = 3600;
  SyntheticStorm storm;
  std::vector<double> q(axis.steps);
  for (std::size_t i = 0; i < net.size(); ++i) {
    syntheticLateral(net, i, storm, axis, q);
    // The front starts at 5 % of the run minus at most 1 % jitter: sample 0
    // is base flow, base per km x length x a 0.7-1.3 jitter.
    const double per_km = q[0] / (net.length_m[i] / 1000.0);
    EXPECT_GE(per_km, 0.7 * storm.base_m3s_per_km);
    EXPECT_LE(per_km, 1.3 * storm.base_m3s_per_km);
    EXPECT_GT(*std::max_element(q.begin(), q.end()), 10 * q[0]);
    for (double v : q) EXPECT_TRUE(std::isfinite(v) && v >= 0);
  }
}

TEST(SyntheticStorm, PulseVolumeMatchesTheGammaIntegral) {
  // ∫ (τ/tp)^(k-1) exp(-(k-1)(τ/tp - 1)) dτ = tp e^(k-1) Γ(k) / (k-1)^k
  // (the gamma integral ∫ x^(k-1) e^(-a x) dx = Γ(k) / a^k).
  const auto net = make(50, 6);
  reachwise::routing::TimeAxis axis;
  axis.dt_s = 60;
  axis.steps = 24 * 60 + 1;  // one day: one storm, tp = 0.04 day = 3456 s
  SyntheticStorm storm;
  storm.base_m3s_per_km = 0;
  for (double k : {2.0, 3.0, 4.5}) {
    storm.gamma_shape = k;
    std::vector<double> q(axis.steps);
    syntheticLateral(net, 7, storm, axis, q);
    const double peak = *std::max_element(q.begin(), q.end());
    double volume = 0;
    for (double v : q) volume += v * axis.dt_s;  // rectangle rule at 60 s
    const double tp = 0.04 * 86400;
    const double expected = tp * std::exp(k - 1) * std::tgamma(k) / std::pow(k - 1, k);
    EXPECT_NEAR(volume / peak, expected, 0.002 * expected) << "k = " << k;
  }
}

TEST(SyntheticStorm, TheStormCrossesFromWestToEast) {
  const auto net = make(4000, 12);
  reachwise::routing::TimeAxis axis;
  axis.steps = 721;
  axis.dt_s = 3600;
  SyntheticStorm storm;
  std::vector<double> q(axis.steps);
  const double west = net.min_x_m + 0.1 * (net.max_x_m - net.min_x_m);
  const double east = net.max_x_m - 0.1 * (net.max_x_m - net.min_x_m);
  std::size_t latest_west = 0, earliest_east = axis.steps;
  for (std::size_t i = 0; i < net.size(); ++i) {
    const double x = net.line(i).front().x;
    if (x > west && x < east) continue;
    syntheticLateral(net, i, storm, axis, q);
    const auto at = static_cast<std::size_t>(std::max_element(q.begin(), q.end()) - q.begin());
    if (x <= west) latest_west = std::max(latest_west, at);
    else earliest_east = std::min(earliest_east, at);
  }
  // 80 % of a 30 %-of-720-h crossing separates them (173 h), jitter ±7 h.
  EXPECT_GT(earliest_east, latest_west + 100);
}

TEST(SyntheticStorm, InflowAtTheFarthestHeadwaterOfEachBasin) {
  const auto net = make(2000, 3, 2);
  reachwise::routing::TimeAxis axis;
  axis.steps = 48;
  axis.dt_s = 3600;
  const auto inflows = syntheticInflow(net, SyntheticStorm{}, axis);
  ASSERT_EQ(inflows.size(), 2u);
  // Independent search: the headwater with the longest path to each outlet.
  std::vector<char> has_upstream(net.size(), 0);
  for (auto d : net.downstream)
    if (d != kSyntheticOutlet) has_upstream[d] = 1;
  for (const auto& inflow : inflows) {
    EXPECT_FALSE(has_upstream[inflow.reach]);
    EXPECT_EQ(inflow.discharge_m3s.size(), axis.steps);
  }
  for (std::uint32_t outlet : net.outlets()) {
    double best = -1;
    std::uint32_t best_reach = 0;
    for (std::size_t i = 0; i < net.size(); ++i) {
      if (has_upstream[i]) continue;
      double path = 0;
      std::size_t at = i;
      for (; net.downstream[at] != kSyntheticOutlet; at = net.downstream[at]) path += net.length_m[at];
      path += net.length_m[at];
      if (at == outlet && path > best) best = path, best_reach = static_cast<std::uint32_t>(i);
    }
    const bool found = std::any_of(inflows.begin(), inflows.end(),
                                   [&](const SyntheticInflow& f) { return f.reach == best_reach; });
    EXPECT_TRUE(found) << "outlet " << outlet;
  }
}

TEST(SyntheticNetwork, NumberedDepthFirstWithContiguousSubtrees) {
  const auto net = make(3000, 13, 2);
  std::vector<std::size_t> size(net.size(), 1);
  for (std::size_t i = 0; i < net.size(); ++i) {
    const std::uint32_t d = net.downstream[i];
    if (d == kSyntheticOutlet) continue;
    EXPECT_GT(d, i);  // every reach after all reaches upstream of it
    size[d] += size[i];  // complete: all of i's upstream reaches come before i
  }
  // The size[i] reaches just before and including i are exactly i's subtree.
  for (std::size_t i = 0; i < net.size(); i += 7) {
    for (std::size_t j = i + 1 - size[i]; j <= i; ++j) {
      std::size_t at = j;
      while (at != i && net.downstream[at] != kSyntheticOutlet) at = net.downstream[at];
      ASSERT_EQ(at, i) << "reach " << j << " in the block of " << i;
    }
  }
}
