#include <cmath>

#include <gtest/gtest.h>

#include <algorithm>

#include "network/NetworkFixtures.hpp"
#include "reachwise/network/NetworkSummary.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"

using namespace reachwise::network;
using reachwise::network::testing::TableBuilder;

namespace {

std::vector<Problem> withCode(const ProblemList& problems, ProblemCode code) {
  std::vector<Problem> out;
  std::copy_if(problems.begin(), problems.end(), std::back_inserter(out),
               [&](const Problem& p) { return p.code == code; });
  return out;
}

bool mentions(const Problem& p, const std::string& text) {
  return p.message.find(text) != std::string::npos;
}

Problem problemOf(ProblemCode code, std::string reach_id, std::string message) {
  Problem p(code, std::move(message));
  p.fid = 7;
  p.reach_id = std::move(reach_id);
  return p;
}

}  // namespace

TEST(Validation, CleanTreeHasNoProblems) {
  const auto table = TableBuilder().link("A", "C").link("B", "C").link("C", std::nullopt).build();
  const ReachGraph g(table);
  EXPECT_TRUE(validate(g).empty());
}

TEST(Validation, UnknownToReachNamesReachFeatureAndPlace) {
  const auto table = TableBuilder()
                         .reach("A", "GHOST", {0, 0}, {400, 300})
                         .reach("B", std::nullopt, {400, 300}, {900, 300})
                         .build();
  const ReachGraph g(table);
  const auto problems = validate(g);
  const auto found = withCode(problems, ProblemCode::UnknownToReach);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].severity, Severity::Error);
  EXPECT_EQ(found[0].reach_id, "A");
  EXPECT_EQ(found[0].fid, 100);
  EXPECT_DOUBLE_EQ(found[0].x, 400.0);  // the downstream end of A
  EXPECT_DOUBLE_EQ(found[0].y, 300.0);
  EXPECT_TRUE(mentions(found[0], "GHOST"));
  EXPECT_TRUE(hasErrors(problems));
}

TEST(Validation, SelfLoopAndCycleAreSeparateCodes) {
  const auto table = TableBuilder()
                         .link("S", "S")
                         .link("C1", "C2")
                         .link("C2", "C3")
                         .link("C3", "C1")
                         .build();
  const ReachGraph g(table);
  const auto problems = validate(g);
  const auto loops = withCode(problems, ProblemCode::SelfLoop);
  ASSERT_EQ(loops.size(), 1u);
  EXPECT_EQ(loops[0].reach_id, "S");
  const auto cycles = withCode(problems, ProblemCode::Cycle);
  ASSERT_EQ(cycles.size(), 1u);
  EXPECT_EQ(cycles[0].reach_id, "C1");
  EXPECT_EQ(cycles[0].fid, 101);
  EXPECT_TRUE(mentions(cycles[0], "C1, C2, C3"));
}

TEST(Validation, DuplicateIdIsAnError) {
  const auto table = TableBuilder().link("A", std::nullopt).link("A", std::nullopt).build();
  const auto problems = validate(ReachGraph(table));
  const auto found = withCode(problems, ProblemCode::DuplicateId);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].fid, 101);
  EXPECT_TRUE(mentions(found[0], "feature 100"));
}

TEST(Validation, BifurcationWithGoodSplitsPasses) {
  const auto table = TableBuilder()
                         .link("A", "B, C")
                         .link("B", std::nullopt, 0.25)
                         .link("C", std::nullopt, 0.75)
                         .build();
  const auto problems = validate(ReachGraph(table));
  EXPECT_TRUE(withCode(problems, ProblemCode::BifurcationSplitMissing).empty());
  EXPECT_TRUE(withCode(problems, ProblemCode::BifurcationSplitSum).empty());
  EXPECT_FALSE(hasErrors(problems));
}

TEST(Validation, BifurcationWithoutSplitNamesTheBranch) {
  const auto table = TableBuilder()
                         .link("A", "B;C")
                         .reach("B", std::nullopt, {1000, 0}, {2000, 500}, 0.4)
                         .reach("C", std::nullopt, {1000, 0}, {2000, -500})
                         .build();
  const auto problems = validate(ReachGraph(table));
  const auto found = withCode(problems, ProblemCode::BifurcationSplitMissing);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].reach_id, "C");
  EXPECT_DOUBLE_EQ(found[0].x, 1000.0);  // where the branch leaves
  EXPECT_TRUE(withCode(problems, ProblemCode::BifurcationSplitSum).empty());
}

TEST(Validation, SplitsMustSumToOneWithinTolerance) {
  // 0.6 + 0.5 = 1.1 is refused; 0.3 + 0.7 - 5e-7 is within 1e-6 and passes.
  const auto bad = TableBuilder()
                       .link("A", "B;C")
                       .link("B", std::nullopt, 0.6)
                       .link("C", std::nullopt, 0.5)
                       .build();
  const auto found = withCode(validate(ReachGraph(bad)), ProblemCode::BifurcationSplitSum);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].reach_id, "A");
  EXPECT_TRUE(mentions(found[0], "1.1"));

  const auto close = TableBuilder()
                         .link("A", "B;C")
                         .link("B", std::nullopt, 0.3)
                         .link("C", std::nullopt, 0.7 - 5e-7)
                         .build();
  EXPECT_TRUE(withCode(validate(ReachGraph(close)), ProblemCode::BifurcationSplitSum).empty());
}

TEST(Validation, SplitOutsideZeroToOneIsRefused) {
  const auto table = TableBuilder()
                         .link("A", "B;C")
                         .link("B", std::nullopt, -0.5)
                         .link("C", std::nullopt, 1.5)
                         .build();
  const auto problems = validate(ReachGraph(table));
  EXPECT_EQ(withCode(problems, ProblemCode::BifurcationSplitRange).size(), 2u);
}

TEST(Validation, SplitOnAnOrdinaryReachIsAWarning) {
  const auto table = TableBuilder().link("A", "B").link("B", std::nullopt, 0.5).build();
  const auto problems = validate(ReachGraph(table));
  const auto found = withCode(problems, ProblemCode::SplitUnused);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].severity, Severity::Warning);
  EXPECT_FALSE(hasErrors(problems));
}

TEST(Validation, InfiniteLengthIsNotCalledZeroLength) {
  // A line from -1e300 to 1e300 is 2e300 m long, whose square (in the
  // length's hypotenuse) overflows to infinity: a length that is not
  // finite, reported as such and not as a zero length.
  const auto table = TableBuilder()
                         .reach("A", "B", {-1e300, 0}, {1e300, 0})
                         .reach("B", std::nullopt, {5, 5}, {100, 5})
                         .build();
  ASSERT_TRUE(std::isinf(table.reaches[0].geometry_length_m));
  const auto problems = validate(ReachGraph(table));
  EXPECT_TRUE(withCode(problems, ProblemCode::ZeroLength).empty());
  const auto found = withCode(problems, ProblemCode::NonFiniteLength);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].reach_id, "A");
  EXPECT_EQ(found[0].severity, Severity::Error);
}

TEST(Validation, ZeroLengthIsAnError) {
  const auto table = TableBuilder()
                         .reach("A", "B", {5, 5}, {5, 5})
                         .reach("B", std::nullopt, {5, 5}, {100, 5})
                         .build();
  const auto found = withCode(validate(ReachGraph(table)), ProblemCode::ZeroLength);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].reach_id, "A");
}

TEST(Validation, OutOfRangeSlopeBuiltInMemoryIsAnError) {
  // A bed slope must be > 0 for Manning's equation to give a flow (common practice).
  auto table = TableBuilder()
                   .reach("A", "B", {0, 0}, {1000, 0})
                   .reach("B", std::nullopt, {1000, 0}, {2000, 0})
                   .build();
  table.reaches[1].section.bed_slope = -0.002;
  const auto problems = validate(ReachGraph(table));
  const auto found = withCode(problems, ProblemCode::InvalidAttribute);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].severity, Severity::Error);
  EXPECT_EQ(found[0].reach_id, "B");
  EXPECT_EQ(found[0].fid, 101);
  EXPECT_DOUBLE_EQ(found[0].x, 1000.0);  // the first vertex of B
  EXPECT_EQ(found[0].message, "bed slope must be > 0, got -0.002");
}

TEST(Validation, EachBadAttributeOfOneReachIsReported) {
  // Ranges (common practice): n > 0, widths >= 0, Muskingum X in [0, 0.5],
  // K > 0, a share in [0, 1], a base flow >= 0.
  auto table = TableBuilder().link("A", std::nullopt).link("B", std::nullopt).build();
  auto& r = table.reaches[0];
  r.section.manning_n = 0;
  r.section.bottom_width_m = -2;
  r.muskingum_k_h = -1;
  r.muskingum_x = 0.7;
  r.base_flow_m3s = -0.1;
  ProblemList problems;
  mergeProblems(problems, validate(ReachGraph(table)));  // kept apart by their messages
  const auto found = withCode(problems, ProblemCode::InvalidAttribute);
  ASSERT_EQ(found.size(), 5u);
  for (const auto& p : found) EXPECT_EQ(p.reach_id, "A");
  EXPECT_TRUE(mentions(found[0], "manning_n"));
  EXPECT_TRUE(mentions(found[1], "bottom_width"));
  EXPECT_TRUE(mentions(found[2], "muskingum_k_h"));
  EXPECT_TRUE(mentions(found[3], "muskingum_x"));
  EXPECT_TRUE(mentions(found[4], "base_flow"));
}

TEST(Validation, ImplausibleRoughnessIsAWarningAndUnsetValuesPass) {
  auto table = TableBuilder().link("A", std::nullopt).build();
  table.reaches[0].section.manning_n = 0.45;  // above 0.3: unlikely for a channel (common practice)
  table.reaches[0].muskingum_x = ReachRecord::kUnset;  // not given: nothing to check
  const auto problems = validate(ReachGraph(table));
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_EQ(problems[0].code, ProblemCode::ImplausibleAttribute);
  EXPECT_EQ(problems[0].severity, Severity::Warning);
  EXPECT_FALSE(hasErrors(problems));
}

TEST(Validation, IdWithABranchSeparatorIsRefused) {
  const auto table = TableBuilder().link("A;1", std::nullopt).build();
  const auto found = withCode(validate(ReachGraph(table)), ProblemCode::InvalidAttribute);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_TRUE(mentions(found[0], "';' or ','"));
}

TEST(Validation, SeveralBasinsAreEachReportedWithTheirOutlet) {
  const auto table = TableBuilder()
                         .link("A", "B")
                         .link("B", std::nullopt)
                         .link("X", "Y")
                         .link("Y", std::nullopt)
                         .build();
  const auto problems = validate(ReachGraph(table));
  const auto basins = withCode(problems, ProblemCode::Basin);
  ASSERT_EQ(basins.size(), 2u);
  EXPECT_EQ(basins[0].severity, Severity::Info);
  EXPECT_EQ(basins[0].reach_id, "B");
  EXPECT_EQ(basins[1].reach_id, "Y");
  // The number the message gives is the plan's `basin` (the results' field).
  const NetworkPlan plan = ReachGraph(table).freeze();
  const auto y = static_cast<std::size_t>(std::find(plan.reach_id.begin(), plan.reach_id.end(), "Y") - plan.reach_id.begin());
  ASSERT_LT(y, plan.size());
  EXPECT_TRUE(mentions(basins[1], "Basin " + std::to_string(plan.basin[y]) + " (of 2,")) << basins[1].message;
  EXPECT_TRUE(mentions(basins[1], "outlet Y"));
  EXPECT_FALSE(hasErrors(problems));
}

TEST(Validation, MergeDropsProblemsAlreadyReported) {
  ProblemList from_reader{problemOf(ProblemCode::DuplicateId, "R1", "reader")};
  const ProblemList from_graph{problemOf(ProblemCode::DuplicateId, "R1", "graph"),
                               problemOf(ProblemCode::Cycle, "R1", "graph")};
  mergeProblems(from_reader, from_graph);
  ASSERT_EQ(from_reader.size(), 2u);
  EXPECT_EQ(from_reader[0].message, "reader");
  EXPECT_EQ(from_reader[1].code, ProblemCode::Cycle);
}

TEST(Validation, MergeKeepsDifferentAttributeProblemsOfOneReach) {
  // One reach may have several bad attributes: their messages tell them apart.
  ProblemList into{problemOf(ProblemCode::InvalidAttribute, "R1", "slope: \"steep\" is not a number")};
  const ProblemList more{problemOf(ProblemCode::InvalidAttribute, "R1", "manning_n must be > 0, got 0"),
                         problemOf(ProblemCode::InvalidAttribute, "R1", "manning_n must be > 0, got 0")};
  mergeProblems(into, more);
  ASSERT_EQ(into.size(), 2u);
  EXPECT_EQ(into[1].message, "manning_n must be > 0, got 0");
}

TEST(NetworkSummary, CountsAKnownNetwork) {
  // A, B -> C (confluence); C -> D;E (bifurcation); D, E outlets. Plus a lone reach Z.
  const auto table = TableBuilder()
                         .reach("A", "C", {0, 0}, {3000, 4000})  // 5 km
                         .link("B", "C")
                         .link("C", "D;E")
                         .link("D", std::nullopt, 0.5)
                         .link("E", std::nullopt, 0.5)
                         .link("Z", std::nullopt)
                         .build();
  const auto s = summarize(ReachGraph(table));
  EXPECT_EQ(s.reaches, 6u);
  EXPECT_EQ(s.links, 4u);
  EXPECT_EQ(s.headwaters, 3u);
  EXPECT_EQ(s.confluences, 1u);
  EXPECT_EQ(s.bifurcations, 1u);
  EXPECT_EQ(s.outlets, 3u);
  EXPECT_EQ(s.basins, 2u);
  EXPECT_EQ(s.cycles, 0u);
  EXPECT_DOUBLE_EQ(s.total_length_km, 10.0);
  EXPECT_EQ(s.max_strahler, 2);
  EXPECT_EQ(s.side_arm_returns, 0u);
}

TEST(NetworkSummary, ASideArmReturnIsNoConfluence) {
  // H splits into M (main, 0.7) and S (side arm, 0.3), which rejoin at R;
  // T joins R's outflow at U. One confluence (U), one side-arm return (R).
  const auto table = TableBuilder()
                         .reach("H", "M;S", {0, 0}, {0, 1000})
                         .link("M", "R", 0.7)
                         .link("S", "R", 0.3)
                         .link("R", "U")
                         .link("T", "U")
                         .link("U", std::nullopt)
                         .build();
  const auto s = summarize(ReachGraph(table));
  EXPECT_EQ(s.confluences, 1u);
  EXPECT_EQ(s.side_arm_returns, 1u);
  EXPECT_EQ(s.bifurcations, 1u);
  // Strahler (1957) with the side arm not counted at its return: H, M, S,
  // R order 1; T 1; U = two feeders of order 1 -> 2.
  EXPECT_EQ(s.max_strahler, 2);
}
