// The tabulated Manning discharge of the diffusion-wave solver
// (hydraulics/ConveyanceTable.hpp) against Manning's formula evaluated
// directly: written out here for a trapezoid (Chow 1959, Open-Channel
// Hydraulics, Table 2-1 geometry and eq. 6-1 in SI), and the section's own
// direct evaluation for a two-stage section and a pipe.

#include "reachwise/hydraulics/ConveyanceTable.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "reachwise/hydraulics/Section.hpp"

using namespace reachwise::hydraulics;

namespace {

/// Q = (1/n) A R^(2/3) S^(1/2) of a trapezoid, b bottom width, z side slope.
double trapezoidManning(double b, double z, double n, double s, double y) {
  const double a = (b + z * y) * y, p = b + 2 * y * std::sqrt(1 + z * z);
  return a * std::pow(a / p, 2.0 / 3.0) * std::sqrt(s) / n;
}

}  // namespace

TEST(ConveyanceTable, TrapezoidMatchesManningsFormula) {
  const double b = 12, z = 2, n = 0.035, s = 4e-4, top = 6;
  const ConveyanceTable t(Section::trapezoid(b, z, n, s), top);
  // The bound the header states: below 1e-7 relative from a tenth of the
  // top up (std::pow and the section's cube root agree to about 1e-15).
  for (double y = 0.1 * top; y <= top; y += 0.01 * top) {
    double q, dq;
    t.dischargeAndDerivative(y, q, dq);
    EXPECT_NEAR(q / trapezoidManning(b, z, n, s, y), 1.0, 1e-7) << y;
    // dQ/dy by a central difference of the formula (step 1e-5 m: its own
    // error ~1e-10 relative).
    const double h = 1e-5;
    const double fd = (trapezoidManning(b, z, n, s, y + h) - trapezoidManning(b, z, n, s, y - h)) / (2 * h);
    EXPECT_NEAR(dq / fd, 1.0, 1e-6) << y;
  }
}

TEST(ConveyanceTable, TheDerivativeIsTheInterpolantsOwn) {
  // Newton's method needs the slope of the function it is given: the
  // returned dQ/dy equals a central difference of the returned Q, also
  // between nodes (where the formula's own derivative differs slightly).
  const ConveyanceTable t(Section::trapezoid(3, 1.5, 0.04, 2e-3), 2.5);
  for (double y = 0.05; y < 2.45; y += 0.0137) {
    double q0, q1, q, dq, unused;
    const double h = 1e-6;
    t.dischargeAndDerivative(y - h, q0, unused);
    t.dischargeAndDerivative(y + h, q1, unused);
    t.dischargeAndDerivative(y, q, dq);
    EXPECT_NEAR(dq, (q1 - q0) / (2 * h), 1e-6 * dq) << y;
  }
}

TEST(ConveyanceTable, TwoStageKeepsTheBankKink) {
  const Section sec = Section::twoStage(8, 1.5, 2.0, 120, 0.035, 0.08, 5e-4);
  const ConveyanceTable t(sec, 5.0);
  for (double y = 0.3; y <= 5.0; y += 0.01) {
    double q, dq, q_ref, dq_ref;
    t.dischargeAndDerivative(y, q, dq);
    sec.dischargeAndDerivative(y, q_ref, dq_ref);
    EXPECT_NEAR(q / q_ref, 1.0, 1e-7) << y;
  }
  // Each side of bank-full keeps its own slope: just below, the main
  // channel's; just above, with the floodplain's added, as the formula
  // (1e-4: the floodplain's part grows as (y − bank)^(5/3), where the
  // interpolant is least accurate, and is still small here).
  double slope[2];
  int side = 0;
  for (double y : {2.0 - 1e-7, 2.0 + 1e-7}) {
    double q, dq, q_ref, dq_ref;
    t.dischargeAndDerivative(y, q, dq);
    sec.dischargeAndDerivative(y, q_ref, dq_ref);
    EXPECT_NEAR(dq / dq_ref, 1.0, 1e-4) << y;
    slope[side++] = dq;
  }
  // The kink itself is far larger than that: not smoothed over.
  EXPECT_GT(std::abs(slope[1] / slope[0] - 1.0), 1e-2) << slope[0] << " " << slope[1];
}

TEST(ConveyanceTable, OutsideTheTableAndPipesAreDirect) {
  const Section open = Section::trapezoid(5, 1, 0.03, 1e-3);
  const ConveyanceTable t(open, 2.0);
  double q, dq, q_ref, dq_ref;
  t.dischargeAndDerivative(3.7, q, dq);  // above the top
  open.dischargeAndDerivative(3.7, q_ref, dq_ref);
  EXPECT_EQ(q, q_ref);
  EXPECT_EQ(dq, dq_ref);
  t.dischargeAndDerivative(-1.0, q, dq);  // below the bed: dry
  EXPECT_EQ(q, 0.0);
  const Section pipe = Section::circle(1.2, 0.013, 5e-3);
  const ConveyanceTable p(pipe, 1.0);
  p.dischargeAndDerivative(0.7, q, dq);
  pipe.dischargeAndDerivative(0.7, q_ref, dq_ref);
  EXPECT_EQ(q, q_ref);
  EXPECT_EQ(dq, dq_ref);
}
