// Lakes of a synthetic network (network::syntheticLakes): placed on nodes
// with a reach flowing in, attached by linkLakes to exactly the reaches the
// generator joined at that node (checked against the generator's own
// downstream array, not against geometry), and the same from the same seed.
#include <gtest/gtest.h>

#include <algorithm>
#include <set>
#include <vector>

#include "network/SyntheticFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/Lakes.hpp"
#include "reachwise/network/ReachGraph.hpp"

using namespace reachwise;
using namespace reachwise::network;

TEST(SyntheticLakes, EachLakeSitsOnItsNodeAndNoOther) {
  const auto net = synthfixture::make(6000, 3, 2);
  const auto lakes = syntheticLakes(net, 400, 3);
  ASSERT_EQ(lakes.size(), 400u);
  LakeTable table;
  std::set<std::uint32_t> reaches;
  for (std::size_t k = 0; k < lakes.size(); ++k) {
    EXPECT_TRUE(reaches.insert(lakes[k].reach).second) << "one lake per node";
    if (k > 0) {
      EXPECT_LT(lakes[k - 1].reach, lakes[k].reach) << "ordered by reach";
    }
    EXPECT_GE(lakes[k].radius_m, 80.0);
    EXPECT_LE(lakes[k].radius_m, 200.0);
    EXPECT_GE(lakes[k].weir_length_m, 2.0);
    EXPECT_LE(lakes[k].weir_length_m, 50.0);
    LakeRecord lake;
    lake.lake_id = SyntheticLake::id(k);
    lake.rings.push_back(lakes[k].ring);
    lake.rule = routing::OutflowRule::weir(lakes[k].crest_level_m, lakes[k].weir_length_m);
    table.lakes.push_back(std::move(lake));
  }
  const ReachTable reach_table = toReachTable(net);
  const ReachGraph graph(reach_table);
  const NetworkPlan plan = graph.freeze();
  ProblemList problems;
  const auto links = linkLakes(plan, table, 5.0, problems);  // the default snap tolerance, 5 m
  EXPECT_TRUE(problems.empty()) << problems.front().message;
  // Plan position of each reach id.
  std::vector<std::uint32_t> at(net.size());
  for (std::size_t i = 0; i < plan.size(); ++i) at[std::stoul(plan.reach_id[i].substr(1))] = static_cast<std::uint32_t>(i);
  for (std::size_t k = 0; k < lakes.size(); ++k) {
    const std::uint32_t r = lakes[k].reach;
    std::vector<std::uint32_t> in;
    for (std::size_t i = 0; i < net.size(); ++i)
      if (net.downstream[i] == r) in.push_back(at[i]);
    ASSERT_FALSE(in.empty()) << "a reach flows into every lake";
    auto got = links[k].inflow;
    std::sort(got.begin(), got.end());
    std::sort(in.begin(), in.end());
    EXPECT_EQ(got, in) << lakes[k].reach;
    EXPECT_EQ(links[k].outflow, std::vector<std::uint32_t>{at[r]});
    EXPECT_TRUE(links[k].inside.empty());
  }
}

TEST(SyntheticLakes, SameSeedSameLakesAndTooManyRefused) {
  const auto net = synthfixture::make(2000, 9);
  const auto a = syntheticLakes(net, 50, 9), b = syntheticLakes(net, 50, 9), c = syntheticLakes(net, 50, 10);
  ASSERT_EQ(a.size(), b.size());
  bool same_as_other_seed = true;
  for (std::size_t k = 0; k < a.size(); ++k) {
    EXPECT_EQ(a[k].reach, b[k].reach);
    EXPECT_EQ(a[k].radius_m, b[k].radius_m);
    same_as_other_seed = same_as_other_seed && a[k].reach == c[k].reach;
  }
  EXPECT_FALSE(same_as_other_seed);
  EXPECT_TRUE(syntheticLakes(net, 0, 9).empty());
  std::size_t nodes_with_inflow = 0;
  std::vector<char> seen(net.size(), 0);
  for (auto d : net.downstream)
    if (d != kSyntheticOutlet && !seen[d]) seen[d] = 1, ++nodes_with_inflow;
  EXPECT_EQ(syntheticLakes(net, nodes_with_inflow, 9).size(), nodes_with_inflow);
  EXPECT_THROW(syntheticLakes(net, nodes_with_inflow + 1, 9), InvalidParameter);
}
