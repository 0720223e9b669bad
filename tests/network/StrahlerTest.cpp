// Strahler order on braided channels: the main branch of a bifurcation, the
// side arms that leave it, and the side-arm returns where they rejoin.
#include "reachwise/network/Strahler.hpp"

#include <gtest/gtest.h>

#include <map>
#include <string>

#include "network/NetworkFixtures.hpp"
#include "reachwise/network/ReachGraph.hpp"

using namespace reachwise::network;
using reachwise::network::testing::TableBuilder;

namespace {

using V = ReachGraph::Vertex;

struct Ordered {
  std::vector<std::uint16_t> strahler;
  SideArms arms;
};

Ordered orderOf(const ReachGraph& g) {
  const auto order = g.topologicalOrder();
  EXPECT_TRUE(order.has_value());
  Ordered out;
  out.arms = sideArms(g, *order);
  out.strahler = strahlerOrder(g, *order, out.arms);
  EXPECT_EQ(strahlerOrder(g, *order), out.strahler);
  return out;
}

V at(const ReachGraph& g, const std::string& id) { return g.find(id).value_or(0); }

}  // namespace

TEST(Strahler, ABraidRejoiningItsChannelKeepsTheOrder) {
  // H1 and H2 (order 1) meet in U (order 2, Strahler 1957). U splits into
  // M (0.7, the main branch) and S (0.3, a side arm); both inherit order 2.
  // They meet again in D. Counting S, two order-2 inflows would make D
  // order 3; S is a side arm, so only M counts and D stays order 2. E, below
  // D, is joined by the order-1 tributary T: max 2, reached once, so 2.
  // Hand count: H1 1, H2 1, U 2, M 2, S 2, D 2, T 1, E 2.
  const auto table = TableBuilder()
                         .link("H1", "U")
                         .link("H2", "U")
                         .link("U", "M;S")
                         .link("M", "D", 0.7)
                         .link("S", "D", 0.3)
                         .link("D", "E")
                         .link("T", "E")
                         .link("E", std::nullopt)
                         .build();
  const ReachGraph g(table);
  const auto o = orderOf(g);
  const std::map<std::string, int> hand = {{"H1", 1}, {"H2", 1}, {"U", 2}, {"M", 2},
                                           {"S", 2},  {"D", 2},  {"T", 1}, {"E", 2}};
  for (const auto& [id, order] : hand) EXPECT_EQ(o.strahler[at(g, id)], order) << id;

  EXPECT_TRUE(o.arms.side_arm[at(g, "S")]);
  EXPECT_FALSE(o.arms.side_arm[at(g, "M")]);
  EXPECT_FALSE(o.arms.side_arm[at(g, "D")]);  // it joined the main channel
  EXPECT_TRUE(o.arms.side_arm_return[at(g, "D")]);
  EXPECT_FALSE(o.arms.side_arm_return[at(g, "E")]);  // an ordinary confluence

  const auto plan = g.freeze();
  for (std::size_t i = 0; i < plan.size(); ++i) {
    EXPECT_EQ(plan.strahler[i], hand.at(plan.reach_id[i])) << plan.reach_id[i];
    EXPECT_EQ(plan.isSideArmReturn(i), plan.reach_id[i] == "D") << plan.reach_id[i];
  }
}

TEST(Strahler, MainBranchIsTheLargestShareThenTheWidest) {
  // Swapping the shares swaps which branch is the side arm.
  for (const bool m_main : {true, false}) {
    const auto table = TableBuilder()
                           .link("U", "M;S")
                           .link("M", "D", m_main ? 0.6 : 0.4)
                           .link("S", "D", m_main ? 0.4 : 0.6)
                           .link("D", std::nullopt)
                           .build();
    const ReachGraph g(table);
    const auto o = orderOf(g);
    EXPECT_EQ(o.arms.side_arm[at(g, "S")], m_main);
    EXPECT_EQ(o.arms.side_arm[at(g, "M")], !m_main);
  }
  // Equal shares: the wider branch is the main one.
  auto table = TableBuilder()
                   .link("U", "M;S")
                   .link("M", "D", 0.5)
                   .link("S", "D", 0.5)
                   .link("D", std::nullopt)
                   .build();
  table.reaches[2].section.bottom_width_m = 25;  // S
  const ReachGraph g(table);
  EXPECT_TRUE(orderOf(g).arms.side_arm[at(g, "M")]);
}

TEST(Strahler, ASideArmJoiningAnotherRiverIsNoReturn) {
  // U (order 2, from two heads) splits into M (main) and S (side arm); S
  // flows on through S2 and joins R, a river of its own (two order-1
  // heads, order 2), in J. J is a confluence, not a side-arm return; S2
  // arrives as a side arm, so J takes order 2 without the +1 that two
  // order-2 channels would give. Hand count: U1 1, U2 1, U 2, M 2, S 2,
  // S2 2, R1 1, R2 1, R 2, J 2.
  const auto table = TableBuilder()
                         .link("U1", "U")
                         .link("U2", "U")
                         .link("U", "M;S")
                         .link("M", std::nullopt, 0.8)
                         .link("S", "S2", 0.2)
                         .link("S2", "J")
                         .link("R1", "R")
                         .link("R2", "R")
                         .link("R", "J")
                         .link("J", std::nullopt)
                         .build();
  const ReachGraph g(table);
  const auto o = orderOf(g);
  EXPECT_TRUE(o.arms.side_arm[at(g, "S2")]);
  EXPECT_FALSE(o.arms.side_arm_return[at(g, "J")]);
  EXPECT_FALSE(o.arms.side_arm[at(g, "J")]);
  EXPECT_EQ(o.strahler[at(g, "S2")], 2);
  EXPECT_EQ(o.strahler[at(g, "R")], 2);
  EXPECT_EQ(o.strahler[at(g, "J")], 2);
}

TEST(Strahler, ASideArmThatBraidsAgainReturnsTwice) {
  // U splits into M (0.6, main) and S (0.4, side arm); S splits again into
  // S1 (0.7) and S2 (0.3), which rejoin in SJ (a return into S1, both
  // tracing up to the bifurcation below S); SJ, still a side arm of U,
  // rejoins M in D (a return: both trace up to the bifurcation below U).
  // D is on the main channel again; SJ is not.
  const auto table = TableBuilder()
                         .link("U1", "U")
                         .link("U2", "U")
                         .link("U", "M;S")
                         .link("M", "D", 0.6)
                         .link("S", "S1;S2", 0.4)
                         .link("S1", "SJ", 0.7)
                         .link("S2", "SJ", 0.3)
                         .link("SJ", "D")
                         .link("D", std::nullopt)
                         .build();
  const ReachGraph g(table);
  const auto o = orderOf(g);
  for (const char* id : {"S", "S1", "S2", "SJ"}) EXPECT_TRUE(o.arms.side_arm[at(g, id)]) << id;
  for (const char* id : {"U", "M", "D"}) EXPECT_FALSE(o.arms.side_arm[at(g, id)]) << id;
  EXPECT_TRUE(o.arms.side_arm_return[at(g, "SJ")]);
  EXPECT_TRUE(o.arms.side_arm_return[at(g, "D")]);
  EXPECT_FALSE(o.arms.side_arm_return[at(g, "U")]);  // an ordinary confluence of two heads
  // Hand count: U1 1, U2 1, U 2, and every reach below U keeps order 2.
  for (const char* id : {"U", "M", "S", "S1", "S2", "SJ", "D"}) EXPECT_EQ(o.strahler[at(g, id)], 2) << id;
}
