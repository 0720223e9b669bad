#include "reachwise/hydraulics/RatingTable.hpp"

#include <gtest/gtest.h>

#include <cmath>

using namespace reachwise::hydraulics;

namespace {
// Largest relative celerity error of the table against the direct normal-depth
// solve, at points between the nodes over the table's whole range.
double maxCelerityError(const Section& s, const RatingTable& t) {
  double worst = 0;
  const double l0 = std::log(t.bottomDischarge()), l1 = std::log(t.topDischarge());
  for (int i = 0; i <= 4001; ++i) {
    const double q = std::exp(l0 + (l1 - l0) * i / 4001.0);
    double c, w;
    t.celerityAndWidth(q, c, w);
    const double exact = s.celerity(s.normalDepth(q));
    worst = std::max(worst, std::abs(c - exact) / exact);
  }
  return worst;
}
}  // namespace

// Requirement: celerity within 0.1 % of the direct solve over the table's range.
TEST(RatingTable, TrapezoidCelerityWithinTenthPercent) {
  const Section s = Section::trapezoid(12, 2, 0.035, 0.0012);
  const RatingTable t(s, 0.01, 2000);
  EXPECT_LT(maxCelerityError(s, t), 1e-3);
}

TEST(RatingTable, PipeCelerityWithinTenthPercent) {
  const Section s = Section::circle(1.2, 0.013, 0.003);
  const RatingTable t(s, 1e-4 * s.capacity(), 10 * s.capacity());
  EXPECT_LT(t.topDischarge(), s.capacity());
  EXPECT_LT(maxCelerityError(s, t), 1e-3);
}

TEST(RatingTable, TwoStageCelerityWithinTenthPercentEitherSideOfBank) {
  const Section s = Section::twoStage(10, 1.5, 2.5, 80, 0.035, 0.07, 0.0009);
  const RatingTable t(s, 0.05, 3000);
  EXPECT_LT(maxCelerityError(s, t), 1e-3);
  // The jump at the bank is kept, not smeared: just above bank-full the
  // top width is the whole section's.
  const double q_bank = s.discharge(2.5);
  double c, w;
  t.celerityAndWidth(q_bank * 1.0001, c, w);
  EXPECT_NEAR(w, 10 + 2 * 1.5 * 2.5 + 80, 0.5);
}

TEST(RatingTable, DepthAndVelocityMatchDirectSolve) {
  const Section s = Section::trapezoid(4, 1, 0.04, 0.004);
  const RatingTable t(s, 0.01, 500);
  for (double q : {0.011, 0.5, 7.3, 120.0, 499.0, 0.001, 900.0}) {
    double y, v;
    t.depthAndVelocity(q, y, v);
    const FlowState f = s.normalFlow(q);
    EXPECT_NEAR(y, f.depth_m, 1e-4 * f.depth_m) << q;
    EXPECT_NEAR(v, f.velocity_ms, 1e-4 * f.velocity_ms) << q;
  }
}

TEST(RatingTable, ValuesOutsideRangeAreHeld) {
  const Section s = Section::rectangle(5, 0.03, 0.001);
  const RatingTable t(s, 1.0, 100.0);
  double c_lo, w_lo, c0, w0, c_hi, w_hi, c1, w1;
  t.celerityAndWidth(1.0, c_lo, w_lo);
  t.celerityAndWidth(0.0, c0, w0);
  t.celerityAndWidth(100.0, c_hi, w_hi);
  t.celerityAndWidth(1e6, c1, w1);
  EXPECT_DOUBLE_EQ(c0, c_lo);
  EXPECT_DOUBLE_EQ(c1, c_hi);
  EXPECT_NEAR(c_lo, s.celerity(s.normalDepth(1.0)), 1e-9);
}

// The table's inverse product 1/(T c) agrees with the direct solve as well.
TEST(RatingTable, InverseWidthCelerityMatchesDirectSolve) {
  const Section s = Section::trapezoid(7, 1, 0.03, 0.002);
  const RatingTable t(s, 0.01, 800);
  for (double q = 0.0123; q < 800; q *= 1.37) {
    double c, g;
    t.celerityAndInverseWidthCelerity(q, c, g);
    const double y = s.normalDepth(q);
    EXPECT_NEAR(g * s.topWidth(y) * s.celerity(y), 1.0, 1e-3) << q;
  }
}
