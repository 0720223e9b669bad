#include "reachwise/routing/Muskingum.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "reachwise/Error.hpp"

using namespace reachwise;
using namespace reachwise::routing;

// Chow, Maidment & Mays (1988), Applied Hydrology, Example 8.4.1 (from memory):
// K = 2.3 h, X = 0.15, Δt = 1 h -> C1 = 0.0631, C2 = 0.3442, C3 = 0.5927.
TEST(Muskingum, CoefficientsChowMaidmentMaysExample8_4_1) {
  const Coefficients c = muskingumCoefficients(2.3 * 3600, 0.15, 3600);
  EXPECT_NEAR(c.in_new, 0.0631, 5e-5);
  EXPECT_NEAR(c.in_old, 0.3442, 5e-5);
  EXPECT_NEAR(c.out_old, 0.5927, 5e-5);
  EXPECT_NEAR(c.sum(), 1.0, 1e-15);
}

// C1 + C2 + C3 = 1 for any K, X, Δt (follows from continuity; Chow et al. 1988 §8.4).
TEST(Muskingum, CoefficientsSumToOne) {
  std::mt19937 rng(4242);
  std::uniform_real_distribution<double> k(60, 1e6), x(0, 0.5), dt(1, 86400);
  for (int i = 0; i < 1000; ++i) EXPECT_NEAR(muskingumCoefficients(k(rng), x(rng), dt(rng)).sum(), 1.0, 1e-12);
}

// Cunge (1969): K = Δx/c and X = (1 − Q/(T S0 c Δx))/2, here by hand.
TEST(MuskingumCunge, CungeKAndX) {
  const double c = 1.5, t = 40, s = 0.0008, q = 120, dx = 3000, dt = 1800;
  const CungeParameters p = cungeParameters(c, t, s, q, dx, dt);
  EXPECT_DOUBLE_EQ(p.k_s, 2000.0);
  EXPECT_NEAR(p.x, 0.5 * (1 - 120.0 / (40 * 0.0008 * 1.5 * 3000)), 1e-15);
  EXPECT_NEAR(p.courant, 0.9, 1e-15);
  EXPECT_FALSE(p.x_clamped);
  // The C/D form equals the Muskingum form with the same K and X.
  const Coefficients m = muskingumCoefficients(p.k_s, p.x, dt);
  EXPECT_NEAR(p.coefficients.in_new, m.in_new, 1e-14);
  EXPECT_NEAR(p.coefficients.in_old, m.in_old, 1e-14);
  EXPECT_NEAR(p.coefficients.out_old, m.out_old, 1e-14);
  EXPECT_NEAR(p.coefficients.lateral * dx, m.lateral * dx, 1e-9);
}

// Cunge's (1969) matching condition: with X = (1 − D)/2 the scheme's
// numerical diffusivity c Δx (1/2 − X) equals the hydraulic diffusivity of
// the diffusion wave, ν = Q / (2 T S0) (Hayami 1951; Ponce 1989, ch. 9), and
// D = 1 where Δx is the diffusion length. The factored form agrees with the
// quotient to round-off, 1/(T c) and 1/(S0 Δx) formed here.
TEST(MuskingumCunge, CellDiffusionRatioMatchesHydraulicDiffusivity) {
  std::mt19937 rng(1969);
  std::uniform_real_distribution<double> u(0, 1);
  for (int i = 0; i < 1000; ++i) {
    const double q = 0.01 + 5000 * u(rng), t = 1 + 300 * u(rng), s = 1e-5 + 0.03 * u(rng);
    const double c = 0.1 + 5 * u(rng), dx = 10 + 20000 * u(rng);
    const double d = cellDiffusionRatio(q, t, s, c, dx);
    const double x = 0.5 * (1 - d);
    const double nu = q / (2 * t * s);
    EXPECT_NEAR(c * dx * (0.5 - x) / nu, 1.0, 1e-12) << i;
    EXPECT_NEAR(cellDiffusionRatio(q, t, s, c, diffusionLength(q, t, s, c)), 1.0, 1e-15) << i;
    const double factored = cellDiffusionRatioFactored(q, 1.0 / (t * c), 1.0 / (s * dx));
    EXPECT_NEAR(factored / d, 1.0, 1e-15) << i;
  }
}

// X below 0 is kept while every coefficient stays non-negative (D <= 1 + C);
// beyond that D is lowered to 1 + C (X = −C/2) and flagged.
TEST(MuskingumCunge, NegativeXIsKeptWhileCoefficientsStayNonNegative) {
  // C = 1.2, D = 100/(10 · 1e-4 · 1 · 500) = 200: lowered to 2.2.
  const CungeParameters clamped = cungeParameters(1.0, 10, 0.0001, 100, 500, 600);
  EXPECT_TRUE(clamped.x_clamped);
  EXPECT_DOUBLE_EQ(clamped.x, -0.6);
  EXPECT_TRUE(clamped.coefficients.nonNegative());
  // C = 0.5, D = 1.1: X = −0.05, kept.
  const CungeParameters kept = cungeParameters(1.0, 10, 0.0001, 1.1, 1000, 500);
  EXPECT_FALSE(kept.x_clamped);
  EXPECT_NEAR(kept.x, -0.05, 1e-12);
  EXPECT_TRUE(kept.coefficients.nonNegative());
}

// The lowest D of positivity: at D_min the coefficients of cungeCoefficients
// sit on their bounds (in_new = f or out_old = 0) and none is below them;
// a little lower D breaks one (algebra of Ponce 1989 eq. 9-62's form).
TEST(MuskingumCunge, LowestCellDiffusionIsTheBoundOfPositivity) {
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> u(0, 1);
  for (int i = 0; i < 1000; ++i) {
    const double courant = 3 * u(rng), f = -0.5 * u(rng);
    const double d = lowestCellDiffusion(courant, inNewBound(f));
    const Coefficients k = cungeCoefficients(courant, d);
    EXPECT_GE(k.in_new, f - 1e-12) << i;
    EXPECT_GE(k.out_old, -1e-12) << i;
    EXPECT_TRUE(std::abs(k.in_new - f) < 1e-12 || std::abs(k.out_old) < 1e-12) << i;
    const Coefficients below = cungeCoefficients(courant, d - 1e-6);
    EXPECT_TRUE(below.in_new < f || below.out_old < 0) << i;
  }
}

// Property: the chosen grid keeps all coefficients >= 0 (in_new >= the
// floor asked for) over a wide range of reaches (the bounds of
// docs/methods.md §4), and says when D was lowered.
TEST(MuskingumCunge, ChosenGridKeepsCoefficientsNonNegative) {
  std::mt19937 rng(99);
  std::uniform_real_distribution<double> u(0, 1);
  for (const double floor : {0.0, kFlatInNewFloor}) {
    int compromises = 0;
    for (int i = 0; i < 2000; ++i) {
      const double length = 50 + 50000 * u(rng) * u(rng), c = 0.2 + 4 * u(rng), t = 2 + 200 * u(rng);
      const double s = 1e-5 + 0.02 * u(rng), q = 0.1 + 2000 * u(rng) * u(rng), dt = 300 + 7200 * u(rng);
      const Grid g = chooseCungeGrid(length, c, t, s, q, dt, {}, floor);
      if (g.compromise) { ++compromises; continue; }
      const CungeParameters p = cungeParameters(c, t, s, q, length / g.subreaches, dt / g.substeps);
      const Coefficients& k = p.coefficients;
      EXPECT_TRUE(k.in_old >= 0 && k.out_old >= 0 && k.in_new >= floor - 1e-12) << i;
      EXPECT_EQ(p.x_clamped, g.x_clamped) << i;
    }
    // The reaches where no grid fits: very short against a long step.
    EXPECT_LE(compromises, 20) << floor;
  }
}

// On a flat reach (the wave moves less than ℓ in a step) the sub-reach is
// the one closest to the length of least phase error, Δx* = (3ℓ² + (cΔt)²)^(1/2)
// (C² + 3D² = 1: the ε³ term of the scheme's amplification factor vanishes,
// derived in docs/methods.md §4), as far as the in_new floor allows.
TEST(MuskingumCunge, FlatReachGridNearLeastPhaseError) {
  const double c = 0.9, t = 40, s = 0.0002, q = 36, dt = 900;
  const double ell = diffusionLength(q, t, s, c), ct = c * dt;  // 5.56 km, 0.81 km
  const double best = std::sqrt(3 * ell * ell + ct * ct);
  const Grid free_grid = chooseCungeGrid(60000, c, t, s, q, dt, {}, -0.9);
  EXPECT_EQ(free_grid.substeps, 1u);
  EXPECT_EQ(free_grid.subreaches, static_cast<std::uint32_t>(std::round(60000 / best)));
  // With every coefficient non-negative, Δx <= ℓ + cΔt: the longest such.
  const Grid positive = chooseCungeGrid(60000, c, t, s, q, dt);
  EXPECT_EQ(positive.subreaches, static_cast<std::uint32_t>(std::ceil(60000 / (ell + ct))));
  EXPECT_FALSE(positive.x_clamped);
  // A reach shorter than ℓ − cΔt: one sub-reach, D lowered.
  EXPECT_TRUE(chooseCungeGrid(3000, c, t, s, q, dt).x_clamped);
}

TEST(Muskingum, SubSteppingBringsStepIntoBand) {
  // Δt = 6 h against K = 1 h, X = 0.2: band 2KX <= Δt <= 2K(1 − X) fails.
  const Grid g = chooseMuskingumGrid(3600, 0.2, 6 * 3600);
  EXPECT_FALSE(g.compromise);
  const double k_sub = 3600.0 / g.subreaches, dts = 6 * 3600.0 / g.substeps;
  EXPECT_GE(dts, 2 * k_sub * 0.2);
  EXPECT_LE(dts, 2 * k_sub * 0.8);
  EXPECT_TRUE(muskingumCoefficients(k_sub, 0.2, dts).nonNegative());
  // Δt far below 2KX: the reach is split.
  const Grid h = chooseMuskingumGrid(10 * 3600, 0.3, 600);
  EXPECT_GT(h.subreaches, 1u);
  EXPECT_TRUE(muskingumCoefficients(10 * 3600.0 / h.subreaches, 0.3, 600.0 / h.substeps).nonNegative());
}

// Ponce (1989): the scheme is exact for C = 1, X = 1/2.
TEST(MuskingumCunge, ConvergenceRatiosExactCase) {
  for (double sdx : {0.05, 0.3, 1.0}) {
    const ConvergenceRatios r = ponceConvergenceRatios(1.0, 0.5, sdx);
    EXPECT_NEAR(r.amplitude, 1.0, 1e-12);
    EXPECT_NEAR(r.phase, 1.0, 1e-12);
  }
  // Finer grids (smaller σΔx) converge towards 1 (Ponce 1989, Fig. 9-13 trend).
  const ConvergenceRatios coarse = ponceConvergenceRatios(0.6, 0.2, 0.8);
  const ConvergenceRatios fine = ponceConvergenceRatios(0.6, 0.2, 0.1);
  EXPECT_LT(std::abs(fine.amplitude - 1), std::abs(coarse.amplitude - 1));
  EXPECT_LT(std::abs(fine.phase - 1), std::abs(coarse.phase - 1));
}

// The coefficient and grid functions are kernels: bad arguments are a bug in
// the caller (the router names bad user input, ReachRouterTest).
TEST(Muskingum, ViolatedPreconditionsAreInternalErrors) {
  EXPECT_THROW(muskingumCoefficients(3600, 0.7, 600), InternalError);
  EXPECT_THROW(muskingumCoefficients(-1, 0.2, 600), InternalError);
  EXPECT_THROW(chooseMuskingumGrid(3600, 0.2, 0), InternalError);
  EXPECT_THROW(cungeParameters(1, 10, 0.0, 5, 100, 60), InternalError);
  EXPECT_THROW(cungeParameters(1, 10, 0.001, std::nan(""), 100, 60), InternalError);
  EXPECT_THROW(chooseCungeGrid(1000, 1, 10, 0.001, -5, 60), InternalError);
}
