#include <fmt/format.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <functional>
#include <numeric>
#include <random>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Strahler.hpp"

using namespace reachwise::network;
using reachwise::network::testing::TableBuilder;
using V = ReachGraph::Vertex;

namespace {

std::vector<std::string> ids(const ReachGraph& g, const std::vector<V>& vs) {
  std::vector<std::string> out;
  for (const auto v : vs) out.push_back(g.id(v));
  return out;
}

V at(const ReachGraph& g, const std::string& id) {
  const auto v = g.find(id);
  EXPECT_TRUE(v.has_value()) << id;
  return v.value_or(0);
}

/// Checks the NetworkPlan invariants documented in NetworkPlan.hpp.
void expectConsistentPlan(const NetworkPlan& plan, std::size_t links) {
  const auto n = plan.size();
  ASSERT_EQ(plan.up_offset.size(), n + 1);
  ASSERT_EQ(plan.down_offset.size(), n + 1);
  EXPECT_EQ(plan.up_offset.front(), 0u);
  EXPECT_EQ(plan.up_offset.back(), plan.up_reach.size());
  EXPECT_EQ(plan.down_offset.back(), plan.down_reach.size());
  EXPECT_EQ(plan.up_reach.size(), links);
  EXPECT_EQ(plan.down_reach.size(), links);
  EXPECT_EQ(plan.up_fraction.size(), links);
  for (std::size_t i = 0; i < n; ++i) {
    ASSERT_LE(plan.up_offset[i], plan.up_offset[i + 1]);
    ASSERT_LE(plan.down_offset[i], plan.down_offset[i + 1]);
    for (auto k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k) {
      const auto u = plan.up_reach[k];
      ASSERT_LT(u, i) << "upstream reach must come first in topological order";
      // The same link must appear in u's downstream list.
      const auto first = plan.down_reach.begin() + plan.down_offset[u];
      const auto last = plan.down_reach.begin() + plan.down_offset[u + 1];
      EXPECT_NE(std::find(first, last, i), last) << "link " << u << "->" << i;
    }
    for (auto k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k) ASSERT_GT(plan.down_reach[k], i);
  }
}

std::size_t indexOf(const NetworkPlan& plan, const std::string& id) {
  const auto it = std::find(plan.reach_id.begin(), plan.reach_id.end(), id);
  EXPECT_NE(it, plan.reach_id.end()) << id;
  return static_cast<std::size_t>(it - plan.reach_id.begin());
}

}  // namespace

TEST(ParseDownstreamIds, SplitsOnSemicolonAndCommaAndTrims) {
  const auto got = parseDownstreamIds(" R2 ; R3,R4,,R3 ");
  ASSERT_EQ(got.size(), 3u);
  EXPECT_EQ(got[0], "R2");
  EXPECT_EQ(got[1], "R3");
  EXPECT_EQ(got[2], "R4");
  EXPECT_TRUE(parseDownstreamIds("  ").empty());
}

TEST(ReachGraph, ChainIsOrderedTopToBottom) {
  // Records deliberately out of flow order: C is the outlet, A the source.
  const auto table = TableBuilder()
                         .reach("C", std::nullopt, {2000, 0}, {3000, 0})
                         .reach("A", "B", {0, 0}, {1000, 0})
                         .reach("B", "C", {1000, 0}, {2000, 0})
                         .build();
  const ReachGraph g(table);
  EXPECT_EQ(g.linkCount(), 2u);
  EXPECT_EQ(ids(g, g.headwaters()), (std::vector<std::string>{"A"}));
  EXPECT_EQ(ids(g, g.outlets()), (std::vector<std::string>{"C"}));
  EXPECT_TRUE(g.confluences().empty());
  EXPECT_TRUE(g.bifurcations().empty());
  EXPECT_EQ(ids(g, g.upstream(at(g, "B"))), (std::vector<std::string>{"A"}));
  EXPECT_EQ(ids(g, g.downstream(at(g, "B"))), (std::vector<std::string>{"C"}));
  const auto order = g.topologicalOrder();
  ASSERT_TRUE(order);
  EXPECT_EQ(ids(g, *order), (std::vector<std::string>{"A", "B", "C"}));

  const auto plan = g.freeze();
  expectConsistentPlan(plan, 2);
  EXPECT_EQ(plan.reach_id, (std::vector<std::string>{"A", "B", "C"}));
  EXPECT_EQ(plan.fid, (std::vector<std::int64_t>{101, 102, 100}));
  EXPECT_EQ(plan.record, (std::vector<std::uint32_t>{1, 2, 0}));
  EXPECT_TRUE(plan.isHeadwater(0));
  EXPECT_TRUE(plan.isOutlet(2));
  EXPECT_DOUBLE_EQ(plan.length_m[1], 1000.0);
  EXPECT_DOUBLE_EQ(plan.top[2].x, 2000.0);
  EXPECT_DOUBLE_EQ(plan.bottom[2].x, 3000.0);
}

TEST(ReachGraph, LineDigitisedAgainstTheFlowIsFlipped) {
  // B is drawn from its downstream end to its upstream end.
  const auto table = TableBuilder()
                         .reach("A", "B", {0, 0}, {1000, 0})
                         .reach("B", "C", {2000, 0}, {1000, 0})
                         .reach("C", std::nullopt, {2000, 0}, {3000, 0})
                         .reach("D", std::nullopt, {5000, 0}, {5000, 800})
                         .build();
  const ReachGraph g(table);
  EXPECT_FALSE(g.flipped(at(g, "A")));
  EXPECT_TRUE(g.flipped(at(g, "B")));
  EXPECT_FALSE(g.flipped(at(g, "C")));
  EXPECT_FALSE(g.flipped(at(g, "D")));  // no links: digitising order kept
  EXPECT_DOUBLE_EQ(g.top(at(g, "B")).x, 1000.0);
  EXPECT_DOUBLE_EQ(g.bottom(at(g, "B")).x, 2000.0);

  // The plan carries the same finding: B's stored line starts at its bottom.
  const auto plan = g.freeze();
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const auto& line = table.reaches[plan.record[i]].line;
    EXPECT_EQ(plan.reversed[i], plan.reach_id[i] == "B") << plan.reach_id[i];
    const auto& first = plan.reversed[i] ? line.back() : line.front();
    EXPECT_DOUBLE_EQ(first.x, plan.top[i].x) << plan.reach_id[i];  // drawn from its top
  }
}

TEST(ReachGraph, FreezeStoresKInSecondsAndBaseFlows) {
  auto table = TableBuilder().link("A", "B").link("B", std::nullopt).build();
  table.reaches[0].muskingum_k_h = 1.5;
  table.reaches[0].base_flow_m3s = 0.25;
  const auto plan = ReachGraph(table).freeze();
  const auto a = indexOf(plan, "A"), b = indexOf(plan, "B");
  EXPECT_DOUBLE_EQ(plan.muskingum_k_s[a], 5400.0);  // 1.5 h = 5400 s
  EXPECT_TRUE(std::isnan(plan.muskingum_k_s[b]));   // not given
  EXPECT_DOUBLE_EQ(plan.base_flow_m3s[a], 0.25);
  EXPECT_TRUE(std::isnan(plan.base_flow_m3s[b]));   // none
}

TEST(ReachGraph, ConfluenceOfY) {
  const auto table = TableBuilder().link("A", "C").link("B", "C").link("C", "D").link("D", "").build();
  const ReachGraph g(table);
  EXPECT_EQ(ids(g, g.confluences()), (std::vector<std::string>{"C"}));
  EXPECT_EQ(ids(g, g.headwaters()), (std::vector<std::string>{"A", "B"}));
  EXPECT_EQ(ids(g, g.outlets()), (std::vector<std::string>{"D"}));  // empty to_reach = outlet
  const auto plan = g.freeze();
  expectConsistentPlan(plan, 3);
  const auto c = indexOf(plan, "C");
  EXPECT_EQ(plan.up_offset[c + 1] - plan.up_offset[c], 2u);
  // Strahler (1957): two first-order streams meet and form a second-order one.
  EXPECT_EQ(plan.strahler[indexOf(plan, "A")], 1);
  EXPECT_EQ(plan.strahler[c], 2);
  EXPECT_EQ(plan.strahler[indexOf(plan, "D")], 2);
}

TEST(ReachGraph, BifurcationCarriesSplitsIntoFractions) {
  const auto table = TableBuilder()
                         .link("A", "B;C")
                         .link("B", "D", 0.3)
                         .link("C", "D", 0.7)
                         .link("D", std::nullopt)
                         .build();
  const ReachGraph g(table);
  EXPECT_EQ(ids(g, g.bifurcations()), (std::vector<std::string>{"A"}));
  EXPECT_EQ(ids(g, g.confluences()), (std::vector<std::string>{"D"}));
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "B")), 0.3);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "C")), 0.7);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "B"), at(g, "D")), 1.0);

  const auto plan = g.freeze();
  expectConsistentPlan(plan, 4);
  const auto b = indexOf(plan, "B");
  ASSERT_EQ(plan.up_offset[b + 1] - plan.up_offset[b], 1u);
  EXPECT_DOUBLE_EQ(plan.up_fraction[plan.up_offset[b]], 0.3);
  const auto d = indexOf(plan, "D");
  for (auto k = plan.up_offset[d]; k < plan.up_offset[d + 1]; ++k)
    EXPECT_DOUBLE_EQ(plan.up_fraction[k], 1.0);
  // Both branches inherit the order of the reach that splits (Strahler
  // 1957); where they meet again B, the side arm (the smaller share), does
  // not count, so D keeps order 1 (docs/formats.md, "Bifurcations").
  EXPECT_EQ(plan.strahler[b], 1);
  EXPECT_EQ(plan.strahler[d], 1);
}

TEST(ReachGraph, CycleIsFoundWithItsIdsAndFreezeRefusesIt) {
  const auto table = TableBuilder()
                         .link("X", "B")
                         .link("B", "C")
                         .link("C", "D")
                         .link("D", "B")
                         .link("E", std::nullopt)
                         .build();
  const ReachGraph g(table);
  EXPECT_FALSE(g.topologicalOrder().has_value());
  const auto cycles = g.cycles();
  ASSERT_EQ(cycles.size(), 1u);
  EXPECT_EQ(ids(g, cycles[0]), (std::vector<std::string>{"B", "C", "D"}));
  try {
    (void)g.freeze();
    FAIL() << "freeze accepted a cycle";
  } catch (const reachwise::InputError& e) {
    EXPECT_EQ(e.where().reach_id, "B");
    EXPECT_EQ(e.where().fid, 101);
    EXPECT_EQ(e.where().file, "memory.gpkg");
  }
}

TEST(ReachGraph, SelfLoopIsACycleOfOne) {
  const auto table = TableBuilder().link("A", "B").link("B", "B").build();
  const ReachGraph g(table);
  EXPECT_TRUE(g.hasSelfLoop(at(g, "B")));
  EXPECT_FALSE(g.hasSelfLoop(at(g, "A")));
  const auto cycles = g.cycles();
  ASSERT_EQ(cycles.size(), 1u);
  EXPECT_EQ(ids(g, cycles[0]), (std::vector<std::string>{"B"}));
  EXPECT_FALSE(g.topologicalOrder().has_value());
}

TEST(ReachGraph, SeveralBasinsAreSeparateComponents) {
  const auto table = TableBuilder()
                         .link("P1", "P3")
                         .link("Q1", "Q2")
                         .link("P2", "P3")
                         .link("P3", std::nullopt)
                         .link("Q2", std::nullopt)
                         .link("Z", std::nullopt)
                         .build();
  const ReachGraph g(table);
  const auto comps = g.components();
  EXPECT_EQ(comps.count, 3u);
  EXPECT_EQ(comps.basin[at(g, "P1")], 0u);  // numbered by lowest record
  EXPECT_EQ(comps.basin[at(g, "P2")], 0u);
  EXPECT_EQ(comps.basin[at(g, "P3")], 0u);
  EXPECT_EQ(comps.basin[at(g, "Q1")], 1u);
  EXPECT_EQ(comps.basin[at(g, "Q2")], 1u);
  EXPECT_EQ(comps.basin[at(g, "Z")], 2u);
  EXPECT_EQ(ids(g, g.outlets()), (std::vector<std::string>{"P3", "Q2", "Z"}));
  const auto plan = g.freeze();
  expectConsistentPlan(plan, 3);
  EXPECT_EQ(plan.basin[indexOf(plan, "Q1")], 1u);
}

TEST(ReachGraph, UnknownIdsAndDuplicatesAreKeptForValidation) {
  const auto table = TableBuilder().link("A", "NOPE").link("B", std::nullopt).link("A", "B").build();
  const ReachGraph g(table);
  ASSERT_EQ(g.unresolvedLinks().size(), 1u);
  EXPECT_EQ(g.unresolvedLinks()[0].reach, 0u);
  EXPECT_EQ(g.unresolvedLinks()[0].to_reach, "NOPE");
  ASSERT_EQ(g.duplicateIds().size(), 1u);
  EXPECT_EQ(g.duplicateIds()[0].reach, 2u);
  EXPECT_EQ(g.duplicateIds()[0].first, 0u);
  EXPECT_EQ(*g.find("A"), 0u);  // the id resolves to its first record
  EXPECT_EQ(g.linkCount(), 1u);
}

TEST(Strahler, KnownSmallTree) {
  // Strahler (1957): order 1 at sources; two streams of order k make k + 1;
  // a lower-order tributary does not raise the order.
  //   a,b -> e (2);  c,d -> f (2);  e,f -> g (3);  g,h -> i (3, h is 1);
  //   i,j -> k where j is fed by l,m (2): k stays 3.
  const auto table = TableBuilder()
                         .link("a", "e").link("b", "e").link("c", "f").link("d", "f")
                         .link("e", "g").link("f", "g").link("g", "i").link("h", "i")
                         .link("l", "j").link("m", "j").link("j", "k").link("i", "k")
                         .link("k", std::nullopt)
                         .build();
  const ReachGraph g(table);
  const auto order = g.topologicalOrder();
  ASSERT_TRUE(order);
  const auto s = strahlerOrder(g, *order);
  const std::vector<std::pair<std::string, int>> expected = {
      {"a", 1}, {"b", 1}, {"c", 1}, {"d", 1}, {"e", 2}, {"f", 2}, {"g", 3},
      {"h", 1}, {"i", 3}, {"l", 1}, {"m", 1}, {"j", 2}, {"k", 3}};
  for (const auto& [id, want] : expected) EXPECT_EQ(s[at(g, id)], want) << id;
}

TEST(Strahler, RefusesAnOrderThatIsNotTopological) {
  const auto table = TableBuilder().link("A", "B").link("B", std::nullopt).build();
  const ReachGraph g(table);
  EXPECT_THROW((void)strahlerOrder(g, {1, 0}), reachwise::InternalError);
}

namespace {

/// Random tree: node k > 0 drains into a random node below k, then the
/// records are shuffled so record order says nothing about flow order.
struct RandomTree {
  std::vector<int> parent;         // by node, -1 for the outlet
  std::vector<std::size_t> record; // node -> record index
  ReachTable table;
};

RandomTree randomTree(std::uint32_t seed, int nodes) {
  std::mt19937 rng(seed);
  RandomTree t;
  t.parent.assign(nodes, -1);
  for (int k = 1; k < nodes; ++k) t.parent[k] = std::uniform_int_distribution<int>(0, k - 1)(rng);
  t.record.resize(nodes);
  std::iota(t.record.begin(), t.record.end(), 0);
  std::shuffle(t.record.begin(), t.record.end(), rng);
  std::vector<int> node_of(nodes);
  for (int k = 0; k < nodes; ++k) node_of[t.record[k]] = k;
  TableBuilder b;
  for (int r = 0; r < nodes; ++r) {
    const int k = node_of[r];
    if (t.parent[k] < 0)
      b.link(fmt::format("n{}", k), std::nullopt);
    else
      b.link(fmt::format("n{}", k), fmt::format("n{}", t.parent[k]));
  }
  t.table = b.build();
  return t;
}

/// Strahler order by the recursive definition over the parent array,
/// independent of ReachGraph (Strahler 1957).
int recursiveStrahler(int k, const std::vector<std::vector<int>>& children) {
  if (children[k].empty()) return 1;
  std::vector<int> orders;
  for (const int c : children[k]) orders.push_back(recursiveStrahler(c, children));
  const int top = *std::max_element(orders.begin(), orders.end());
  return std::count(orders.begin(), orders.end(), top) >= 2 ? top + 1 : top;
}

}  // namespace

TEST(ReachGraph, RandomTreesFreezeToConsistentTopologicalPlans) {
  for (std::uint32_t seed = 1; seed <= 200; ++seed) {
    const int nodes = 2 + static_cast<int>(seed % 60);
    const auto t = randomTree(seed, nodes);
    const ReachGraph g(t.table);
    const auto plan = g.freeze();
    SCOPED_TRACE("seed " + std::to_string(seed));
    ASSERT_EQ(plan.size(), static_cast<std::size_t>(nodes));
    expectConsistentPlan(plan, static_cast<std::size_t>(nodes - 1));
    EXPECT_EQ(g.outlets().size(), 1u);
    EXPECT_EQ(g.components().count, 1u);

    std::vector<std::vector<int>> children(nodes);
    for (int k = 1; k < nodes; ++k) children[t.parent[k]].push_back(k);
    for (std::size_t i = 0; i < plan.size(); ++i) {
      const int k = std::stoi(plan.reach_id[i].substr(1));
      EXPECT_EQ(plan.record[i], t.record[k]);
      EXPECT_EQ(plan.strahler[i], recursiveStrahler(k, children)) << plan.reach_id[i];
      EXPECT_EQ(plan.up_offset[i + 1] - plan.up_offset[i], children[k].size());
    }
  }
}

TEST(ReachGraph, EmptyTableFreezesToAnEmptyPlan) {
  const ReachTable table;
  const ReachGraph g(table);
  EXPECT_EQ(g.size(), 0u);
  EXPECT_EQ(g.components().count, 0u);
  EXPECT_TRUE(g.cycles().empty());
  const auto plan = g.freeze();
  EXPECT_EQ(plan.size(), 0u);
  EXPECT_EQ(plan.up_offset, (std::vector<std::uint32_t>{0}));
  EXPECT_EQ(plan.down_offset, (std::vector<std::uint32_t>{0}));
}

TEST(ReachGraph, RecordWithoutGeometryHasNoEndPoints) {
  auto table = TableBuilder().link("A", "B").link("B", std::nullopt).build();
  table.reaches[0].line.clear();
  const ReachGraph g(table);
  EXPECT_FALSE(g.flipped(0));
  EXPECT_TRUE(std::isnan(g.top(0).x));
  EXPECT_TRUE(std::isnan(g.bottom(0).y));
  EXPECT_FALSE(g.flipped(1));  // judged against a reach with no line: kept as digitised
}

TEST(ReachGraph, FreezeBuildsSectionsAndNamesAnInvalidOne) {
  auto table = TableBuilder().link("A", "B").link("B", std::nullopt).build();
  {
    const auto plan = ReachGraph(table).freeze();
    ASSERT_EQ(plan.section.size(), 2u);
    // The built section is the record's: Manning's n and the bed slope as given.
    EXPECT_EQ(plan.section[0].manningN(), 0.035);
  }
  // A table that was not validated: a negative slope is refused by name
  // when the plan is frozen, not later inside the router.
  table.reaches[1].section.bed_slope = -0.001;
  try {
    (void)ReachGraph(table).freeze();
    FAIL() << "freeze accepted a negative bed slope";
  } catch (const reachwise::InputError& e) {
    EXPECT_EQ(e.where().reach_id, "B");
    EXPECT_EQ(e.where().fid, 101);
    EXPECT_FALSE(e.where().field.empty());
  }
}
