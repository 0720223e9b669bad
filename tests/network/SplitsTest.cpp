// The shares of each bifurcation, resolved once when the graph is built:
// run-file overrides, the `split` fields, the default rule (width, equal,
// none), the pieces of cut lines, and what validate() reports about each.
#include "reachwise/network/Splits.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"

using namespace reachwise::network;
using reachwise::InputError;
using reachwise::network::testing::TableBuilder;

namespace {

using V = ReachGraph::Vertex;

V at(const ReachGraph& g, const std::string& id) {
  const auto v = g.find(id);
  EXPECT_TRUE(v.has_value()) << id;
  return v.value_or(0);
}

std::vector<Problem> withCode(const ProblemList& problems, ProblemCode code) {
  std::vector<Problem> out;
  std::copy_if(problems.begin(), problems.end(), std::back_inserter(out),
               [&](const Problem& p) { return p.code == code; });
  return out;
}

bool mentions(const Problem& p, const std::string& text) { return p.message.find(text) != std::string::npos; }

/// A → B;C, splits as given (NaN = none), bottom widths as given.
ReachTable fork(double split_b, double split_c, double width_b = 10, double width_c = 10) {
  auto table = TableBuilder()
                   .reach("A", "B;C", {0, 0}, {0, 1000})
                   .reach("B", std::nullopt, {0, 1000}, {-500, 2000}, split_b)
                   .reach("C", std::nullopt, {0, 1000}, {500, 2000}, split_c)
                   .build();
  table.reaches[1].section.bottom_width_m = width_b;
  table.reaches[2].section.bottom_width_m = width_c;
  return table;
}

SplitRules withDefault(DefaultSplit rule) {
  SplitRules rules;
  rules.fallback = rule;
  return rules;
}

SplitOverride overrideAt(std::string reach, std::vector<std::pair<std::string, double>> shares) {
  return SplitOverride{std::move(reach), std::move(shares), "network.split[1]"};
}

}  // namespace

TEST(Splits, NoSplitsGetSharesByBottomWidthWithAWarning) {
  // 30 m and 10 m wide branches take 30/40 and 10/40 of the flow.
  const auto table = fork(NAN, NAN, 30, 10);
  const ReachGraph g(table);  // default_split = "width" is the default
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "B")), 0.75);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "C")), 0.25);
  EXPECT_DOUBLE_EQ(g.share(at(g, "B")), 0.75);
  ASSERT_NE(g.sharesAt(at(g, "A")), nullptr);
  EXPECT_EQ(g.sharesAt(at(g, "A"))->source, ShareSource::Width);
  EXPECT_TRUE(std::isnan(table.reaches[1].split)) << "the user's records are not changed";

  const auto problems = validate(g);
  EXPECT_FALSE(hasErrors(problems));
  const auto assumed = withCode(problems, ProblemCode::SplitAssumed);
  ASSERT_EQ(assumed.size(), 1u);
  EXPECT_EQ(assumed[0].severity, Severity::Warning);
  EXPECT_EQ(assumed[0].reach_id, "A");
  EXPECT_DOUBLE_EQ(assumed[0].y, 1000.0);  // the downstream end of A
  EXPECT_TRUE(mentions(assumed[0], "by bottom width (default_split = \"width\")")) << assumed[0].message;
  EXPECT_TRUE(mentions(assumed[0], "B 0.75")) << assumed[0].message;
  EXPECT_TRUE(mentions(assumed[0], "C 0.25")) << assumed[0].message;

  // The plan routes with the same shares, and records them per branch.
  const auto plan = g.freeze();
  for (std::size_t i = 0; i < plan.size(); ++i) {
    if (plan.reach_id[i] == "A") {
      EXPECT_TRUE(std::isnan(plan.split[i]));
    } else if (plan.reach_id[i] == "B") {
      ASSERT_EQ(plan.up_offset[i + 1] - plan.up_offset[i], 1u);
      EXPECT_DOUBLE_EQ(plan.up_fraction[plan.up_offset[i]], 0.75);
      EXPECT_DOUBLE_EQ(plan.split[i], 0.75);
    }
  }
}

TEST(Splits, PipesShareByDiameterAndAMissingWidthMeansEqualShares) {
  auto pipes = fork(NAN, NAN);
  for (std::size_t k : {1u, 2u}) pipes.reaches[k].section.shape = reachwise::hydraulics::Shape::Circle;
  pipes.reaches[1].section.diameter_m = 0.6;
  pipes.reaches[2].section.diameter_m = 0.2;
  const ReachGraph g(pipes);
  EXPECT_DOUBLE_EQ(g.share(at(g, "B")), 0.75);  // 0.6 / (0.6 + 0.2)
  EXPECT_DOUBLE_EQ(g.share(at(g, "C")), 0.25);

  // A branch with no bottom width (a triangle: width 0, banks 2:1): equal shares.
  auto triangle = fork(NAN, NAN, 30, 0);
  triangle.reaches[2].section.side_slope = 2;
  const ReachGraph t(triangle);
  EXPECT_DOUBLE_EQ(t.share(at(t, "B")), 0.5);
  EXPECT_DOUBLE_EQ(t.share(at(t, "C")), 0.5);
  EXPECT_EQ(t.sharesAt(at(t, "A"))->source, ShareSource::Equal);
  const auto assumed = withCode(validate(t), ProblemCode::SplitAssumed);
  ASSERT_EQ(assumed.size(), 1u);
  EXPECT_TRUE(mentions(assumed[0], "equal shares (default_split = \"width\", but a branch has no bottom width)"))
      << assumed[0].message;
}

TEST(Splits, EqualRuleGivesEachBranchTheSameShare) {
  const auto table = TableBuilder()
                         .link("A", "B;C;D")
                         .link("B", std::nullopt)
                         .link("C", std::nullopt)
                         .link("D", std::nullopt)
                         .build();
  const ReachGraph g(table, withDefault(DefaultSplit::Equal));
  for (const char* id : {"B", "C", "D"}) EXPECT_DOUBLE_EQ(g.share(at(g, id)), 1.0 / 3.0) << id;
  const auto problems = validate(g);
  EXPECT_FALSE(hasErrors(problems));
  const auto assumed = withCode(problems, ProblemCode::SplitAssumed);
  ASSERT_EQ(assumed.size(), 1u);
  EXPECT_TRUE(mentions(assumed[0], "equal shares (default_split = \"equal\")")) << assumed[0].message;
  EXPECT_TRUE(mentions(assumed[0], "B 0.3333, C 0.3333, D 0.3333")) << assumed[0].message;
}

TEST(Splits, NoneRuleKeepsMissingSplitsAnError) {
  const auto table = fork(NAN, NAN);
  const ReachGraph g(table, withDefault(DefaultSplit::None));
  EXPECT_TRUE(std::isnan(g.share(at(g, "B"))));
  const auto problems = validate(g);
  EXPECT_TRUE(withCode(problems, ProblemCode::SplitAssumed).empty());
  const auto missing = withCode(problems, ProblemCode::BifurcationSplitMissing);
  ASSERT_EQ(missing.size(), 2u);
  EXPECT_EQ(missing[0].severity, Severity::Error);
  EXPECT_TRUE(mentions(missing[0], "default_split is \"none\"")) << missing[0].message;
}

TEST(Splits, SomeBranchesWithoutASplitStayAnErrorNamingTheOthers) {
  for (const auto rule : {DefaultSplit::Width, DefaultSplit::Equal}) {
    const auto table = fork(0.4, NAN);
    const ReachGraph g(table, withDefault(rule));
    const auto problems = validate(g);
    EXPECT_TRUE(withCode(problems, ProblemCode::SplitAssumed).empty());
    const auto missing = withCode(problems, ProblemCode::BifurcationSplitMissing);
    ASSERT_EQ(missing.size(), 1u);
    EXPECT_EQ(missing[0].reach_id, "C");
    EXPECT_TRUE(mentions(missing[0], "while B has one")) << missing[0].message;
  }
}

TEST(Splits, OverrideReplacesTheFieldValues) {
  const auto table = fork(0.4, 0.6);
  SplitRules rules;
  rules.overrides = {overrideAt("A", {{"C", 0.2}, {"B", 0.8}})};
  const ReachGraph g(table, rules);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "B")), 0.8);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "A"), at(g, "C")), 0.2);
  EXPECT_EQ(g.sharesAt(at(g, "A"))->source, ShareSource::Override);
  EXPECT_DOUBLE_EQ(table.reaches[1].split, 0.4) << "the user's records are not changed";
  EXPECT_TRUE(validate(g).empty());

  // An override also settles a bifurcation without split fields, silently.
  const auto bare = fork(NAN, NAN);
  const ReachGraph h(bare, rules);
  EXPECT_DOUBLE_EQ(h.share(at(h, "B")), 0.8);
  EXPECT_TRUE(withCode(validate(h), ProblemCode::SplitAssumed).empty());
}

struct BadOverride {
  const char* what;
  std::vector<SplitOverride> overrides;
  std::string key;       ///< the key the error must name
  std::string fragment;  ///< and a piece of its message
};

TEST(Splits, EachOverrideMistakeIsAnInputErrorNamingTheFileAndKey) {
  const auto table = TableBuilder()
                         .link("A", "B;C")
                         .link("B", "D")
                         .link("C", std::nullopt)
                         .link("D", std::nullopt)
                         .build();
  SplitOverride second = overrideAt("A", {{"B", 0.5}, {"C", 0.5}});
  second.key = "network.split[2]";
  const std::vector<BadOverride> cases = {
      {"unknown reach", {overrideAt("Z", {{"B", 1}})}, "network.split[1].at", "not a reach"},
      {"no bifurcation", {overrideAt("B", {{"D", 1}})}, "network.split[1].at", "not a bifurcation"},
      {"not a branch", {overrideAt("A", {{"B", 0.5}, {"D", 0.5}})}, "network.split[1].shares.D",
       "not a branch"},
      {"branch left out", {overrideAt("A", {{"B", 1}})}, "network.split[1].shares", "no share for branch C"},
      {"negative", {overrideAt("A", {{"B", 1.2}, {"C", -0.2}})}, "network.split[1].shares.C",
       "zero or positive"},
      {"sum", {overrideAt("A", {{"B", 0.5}, {"C", 0.4}})}, "network.split[1].shares", "sum to 0.9"},
      {"twice", {overrideAt("A", {{"B", 0.5}, {"C", 0.5}}), second}, "network.split[2].at", "already"},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(c.what);
    SplitRules rules;
    rules.origin = "run.toml";
    rules.overrides = c.overrides;
    try {
      const ReachGraph g(table, rules);
      ADD_FAILURE() << "accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.where().file, "run.toml");
      EXPECT_EQ(e.where().field, c.key);
      EXPECT_NE(e.plainMessage().find(c.fragment), std::string::npos) << e.what();
    }
  }
  // Within the tolerance of the field splits (1e-6) the sum passes.
  SplitRules close;
  close.overrides = {overrideAt("A", {{"B", 0.3}, {"C", 0.7 - 5e-7}})};
  EXPECT_NO_THROW(ReachGraph(table, close));
}

TEST(Splits, SplitOnAnotherPieceOfACutBranchIsNotReported) {
  // Line 7 leaves the bifurcation below U with split 0.6 and was cut where
  // T joins it: both pieces copy the line's split, only 7.1 is the branch.
  // The override may name the piece.
  auto table = TableBuilder()
                   .link("U", "7.1;X")
                   .link("7.1", "7.2", 0.6)
                   .link("T", "7.2")
                   .link("7.2", std::nullopt, 0.6)
                   .link("X", std::nullopt, 0.4)
                   .build();
  // The pieces name their line, as topology from geometry records it.
  table.reaches[1].line_id = table.reaches[3].line_id = "7";
  const ReachGraph g(table);
  EXPECT_DOUBLE_EQ(g.fraction(at(g, "U"), at(g, "7.1")), 0.6);
  EXPECT_TRUE(g.splits().piece_split[at(g, "7.2")]);
  const auto problems = validate(g);
  EXPECT_TRUE(withCode(problems, ProblemCode::SplitUnused).empty());
  EXPECT_FALSE(hasErrors(problems));

  SplitRules rules;
  rules.overrides = {overrideAt("U", {{"7.1", 0.7}, {"X", 0.3}})};
  EXPECT_DOUBLE_EQ(ReachGraph(table, rules).share(at(g, "7.1")), 0.7);

  // A split elsewhere off a branch is still reported: on an ordinary reach,
  // and on a piece whose value is not the branch piece's.
  // Ids that merely look like pieces are whole reaches: "7.1"-like ids
  // from a to_reach layer keep their split_unused warning.
  auto plain = table;
  plain.reaches[1].line_id = plain.reaches[3].line_id = "";
  EXPECT_EQ(withCode(validate(ReachGraph(plain)), ProblemCode::SplitUnused).size(), 1u);

  auto misplaced = table;
  misplaced.reaches[2].split = 0.5;   // T
  misplaced.reaches[3].split = 0.3;   // 7.2
  const auto unused = withCode(validate(ReachGraph(misplaced)), ProblemCode::SplitUnused);
  ASSERT_EQ(unused.size(), 2u);
  EXPECT_EQ(unused[0].reach_id, "T");
  EXPECT_EQ(unused[1].reach_id, "7.2");
}
