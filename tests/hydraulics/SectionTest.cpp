#include "reachwise/hydraulics/Section.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/Units.hpp"

using namespace reachwise;
using namespace reachwise::hydraulics;

// Chow (1959) Open-Channel Hydraulics, Example 6-2 (from memory): trapezoid
// b = 20 ft, z = 2, S0 = 0.0016, n = 0.025, Q = 400 cfs -> y_n ≈ 3.36 ft.
TEST(Section, NormalDepthChowExample6_2) {
  const Section s = Section::trapezoid(units::feetToMetres(20.0), 2.0, 0.025, 0.0016);
  const double y_ft = units::metresToFeet(s.normalDepth(units::cfsToM3s(400.0)));
  EXPECT_NEAR(y_ft, 3.36, 0.01);
}

// Same example evaluated in US customary units with Manning's 1.486 factor
// (Chow 1959, eq. 6-1): at y = 3.36 ft, A = 89.8 ft², P = 35.0 ft, Q ≈ 400 cfs.
TEST(Section, UsCustomaryManningAgreesWithSi) {
  const double y = 3.36, b = 20, z = 2;
  const double a = (b + z * y) * y, p = b + 2 * y * std::sqrt(1 + z * z);
  const double q_us = units::kManningUsCustomary / 0.025 * a * std::pow(a / p, 2.0 / 3.0) * std::sqrt(0.0016);
  const Section s = Section::trapezoid(units::feetToMetres(b), z, 0.025, 0.0016);
  const double q_si = units::m3sToCfs(s.discharge(units::feetToMetres(y)));
  EXPECT_NEAR(q_us, 400.0, 1.0);
  // 1.486 vs the exact (1/0.3048)^(1/3) = 1.4859 differ by 0.01 %.
  EXPECT_NEAR(q_si / q_us, 1.0, 2e-4);
}

// Chow (1959) Table 2-1 section elements: rectangle of width b and depth y.
TEST(Section, RectangleGeometry) {
  const Section s = Section::rectangle(4.0, 0.03, 0.001);
  EXPECT_DOUBLE_EQ(s.area(1.5), 6.0);
  EXPECT_DOUBLE_EQ(s.wettedPerimeter(1.5), 7.0);
  EXPECT_DOUBLE_EQ(s.topWidth(1.5), 4.0);
  EXPECT_DOUBLE_EQ(s.hydraulicRadius(1.5), 6.0 / 7.0);
}

// Circle: half full has A = π d²/8, P = π d/2, T = d (Chow 1959, Table 2-1).
TEST(Section, CircleHalfFull) {
  const double d = 1.2;
  const Section s = Section::circle(d, 0.013, 0.002);
  EXPECT_NEAR(s.area(d / 2), std::numbers::pi * d * d / 8, 1e-12);
  EXPECT_NEAR(s.wettedPerimeter(d / 2), std::numbers::pi * d / 2, 1e-12);
  EXPECT_NEAR(s.topWidth(d / 2), d, 1e-12);
}

// The maximum discharge of a circular pipe occurs near y = 0.938 d and is
// about 1.076 times the full-pipe discharge (Chow 1959, §6-3; from memory).
TEST(Section, PipeCapacityNearCrown) {
  const double d = 0.9, n = 0.013, slope = 0.004;
  const Section s = Section::circle(d, n, slope);
  const double a = std::numbers::pi * d * d / 4;
  const double q_full = a * std::pow(d / 4, 2.0 / 3.0) * std::sqrt(slope) / n;  // R = d/4 full
  EXPECT_NEAR(s.capacityDepth() / d, 0.938, 0.002);
  EXPECT_NEAR(s.capacity() / q_full, 1.076, 0.002);
  EXPECT_NEAR(s.discharge(d), q_full, 1e-9 * q_full);
}

TEST(Section, PipeSurchargeIsReportedNotIterated) {
  const Section s = Section::circle(0.6, 0.013, 0.003);
  const FlowState f = s.normalFlow(2.0 * s.capacity());
  EXPECT_TRUE(f.surcharged);
  EXPECT_DOUBLE_EQ(f.depth_m, s.capacityDepth());
  EXPECT_FALSE(s.normalFlow(0.5 * s.capacity()).surcharged);
}

// Celerity identities (Chow 1959; Ponce 1989, Engineering Hydrology §9):
// rectangle c = V (5/3 − (4/3) R/b), wide rectangle -> 5/3 V, triangle c = 4/3 V.
TEST(Section, CelerityIdentities) {
  const Section rect = Section::rectangle(6.0, 0.035, 0.0008);
  for (double y : {0.1, 0.7, 2.0, 5.0}) {
    const double v = rect.velocity(y), r = rect.hydraulicRadius(y);
    EXPECT_NEAR(rect.celerity(y), v * (5.0 / 3.0 - 4.0 / 3.0 * r / 6.0), 1e-12 * v) << y;
  }
  const Section wide = Section::rectangle(1e5, 0.03, 0.001);
  EXPECT_NEAR(wide.celerity(1.0) / wide.velocity(1.0), 5.0 / 3.0, 1e-4);
  const Section tri = Section::triangle(1.5, 0.04, 0.002);
  for (double y : {0.05, 0.8, 3.0}) EXPECT_NEAR(tri.celerity(y), 4.0 / 3.0 * tri.velocity(y), 1e-12);
}

// The analytical dQ/dy equals a central difference of Q(y) for every shape.
TEST(Section, DischargeDerivativeMatchesFiniteDifference) {
  const Section shapes[] = {Section::trapezoid(3, 1.5, 0.03, 0.001), Section::circle(1.5, 0.014, 0.002),
                            Section::twoStage(5, 1, 1.2, 40, 0.03, 0.06, 0.0015)};
  for (const Section& s : shapes)
    for (double y : {0.2, 0.9, 1.3, 1.4}) {
      const double h = 1e-6;
      const double fd = (s.discharge(y + h) - s.discharge(y - h)) / (2 * h);
      EXPECT_NEAR(s.dischargeDerivative(y), fd, 1e-5 * std::abs(fd)) << y;
    }
}

// Ratio beta = c / V lies between 1 and 5/3 for open prismatic sections
// (Ponce 1989, §9; common practice for the bound).
TEST(Section, CelerityToVelocityRatioBounds) {
  std::mt19937 rng(12345);
  std::uniform_real_distribution<double> b(0.5, 60), z(0, 4), y(0.01, 8);
  for (int i = 0; i < 500; ++i) {
    const Section s = Section::trapezoid(b(rng), z(rng), 0.035, 0.001);
    const double d = y(rng), beta = s.celerity(d) / s.velocity(d);
    EXPECT_GE(beta, 1.0 - 1e-12);
    EXPECT_LE(beta, 5.0 / 3.0 + 1e-12);
  }
}

TEST(Section, NormalDepthRoundTripsDischarge) {
  std::mt19937 rng(777);
  std::uniform_real_distribution<double> u(0, 1);
  for (int i = 0; i < 300; ++i) {
    const Section shapes[] = {
        Section::trapezoid(1 + 30 * u(rng), 3 * u(rng), 0.02 + 0.05 * u(rng), 1e-4 + 0.02 * u(rng)),
        Section::circle(0.3 + 2 * u(rng), 0.012 + 0.01 * u(rng), 1e-4 + 0.02 * u(rng)),
        Section::twoStage(2 + 10 * u(rng), 2 * u(rng), 0.5 + 2 * u(rng), 10 + 100 * u(rng), 0.03, 0.07,
                          1e-4 + 0.01 * u(rng))};
    for (const Section& s : shapes) {
      const double q = s.shape() == Shape::Circle ? s.capacity() * u(rng) : 1000 * u(rng) * u(rng);
      const double y = s.normalDepth(q);
      EXPECT_NEAR(s.discharge(y), q, 1e-8 * q + 1e-14) << "shape " << int(s.shape());
    }
  }
}

// Started from a guess, however poor, the solve still satisfies Manning's
// equation (Chow 1959, eq. 5-7) to the same tolerance as from cold, and
// agrees with the cold solve.
TEST(Section, NormalDepthFromAnyGuessRoundTripsDischarge) {
  std::mt19937 rng(4242);
  std::uniform_real_distribution<double> u(0, 1);
  for (int i = 0; i < 200; ++i) {
    const Section shapes[] = {
        Section::trapezoid(1 + 30 * u(rng), 3 * u(rng), 0.02 + 0.05 * u(rng), 1e-4 + 0.02 * u(rng)),
        Section::circle(0.3 + 2 * u(rng), 0.012 + 0.01 * u(rng), 1e-4 + 0.02 * u(rng)),
        Section::twoStage(2 + 10 * u(rng), 2 * u(rng), 0.5 + 2 * u(rng), 10 + 100 * u(rng), 0.03, 0.07,
                          1e-4 + 0.01 * u(rng))};
    for (const Section& s : shapes) {
      const double q = s.shape() == Shape::Circle ? s.capacity() * u(rng) : 1000 * u(rng) * u(rng);
      const double cold = s.normalDepth(q);
      for (double guess : {1e-9, 0.5 * cold, 0.999 * cold, 1.001 * cold, 3.0 * cold, 1e4}) {
        const double y = s.normalDepth(q, guess);
        EXPECT_NEAR(s.discharge(y), q, 1e-8 * q + 1e-14) << "shape " << int(s.shape()) << " guess " << guess;
        EXPECT_NEAR(y, cold, 1e-8 * cold + 1e-14) << "shape " << int(s.shape()) << " guess " << guess;
      }
    }
  }
}

// Q from the joint evaluation is discharge()'s number, bit for bit (the
// rating table relies on it), and dQ/dy is the slope of Q: a central
// difference agrees (common practice).
TEST(Section, DischargeAndDerivativeTogether) {
  const Section shapes[] = {Section::trapezoid(12, 2, 0.035, 0.0012), Section::circle(1.2, 0.013, 0.003),
                            Section::twoStage(10, 1.5, 2.5, 80, 0.035, 0.07, 0.0009)};
  for (const Section& s : shapes) {
    for (double y : {0.0, 0.01, 0.3, 1.1, 2.5, 2.6, 4.0}) {
      double q, dq;
      s.dischargeAndDerivative(y, q, dq);
      EXPECT_EQ(q, s.discharge(y)) << y;
      if (y > 0.005 && y != 2.5 && !(s.shape() == Shape::Circle && y >= 1.1)) {
        const double h = 1e-6 * y;
        EXPECT_NEAR(dq, (s.discharge(y + h) - s.discharge(y - h)) / (2 * h), 1e-5 * dq) << y;
      }
    }
  }
}

// Divided-channel method: discharge is continuous at bank-full and, above
// the bank, exceeds what the main channel alone would carry.
TEST(Section, TwoStageDividedChannel) {
  const Section s = Section::twoStage(8, 1.5, 2.0, 60, 0.035, 0.08, 0.001);
  const Section main = Section::trapezoid(8, 1.5, 0.035, 0.001);
  EXPECT_NEAR(s.discharge(2.0), main.discharge(2.0), 1e-12);
  EXPECT_NEAR(s.discharge(2.0 + 1e-9), s.discharge(2.0), 1e-6);
  EXPECT_GT(s.topWidth(2.5), main.topWidth(2.0) + 59.9);
  // Floodplain part by hand: A = 60·0.5, P = 60 + 2·0.5, n = 0.08.
  const double a_fp = 30, p_fp = 61, q_fp = a_fp * std::pow(a_fp / p_fp, 2.0 / 3.0) * std::sqrt(0.001) / 0.08;
  const double a_m = (8 + 1.5 * 2) * 2 + (8 + 2 * 1.5 * 2) * 0.5, p_m = 8 + 2 * 2 * std::sqrt(1 + 1.5 * 1.5);
  const double q_m = a_m * std::pow(a_m / p_m, 2.0 / 3.0) * std::sqrt(0.001) / 0.035;
  EXPECT_NEAR(s.discharge(2.5), q_m + q_fp, 1e-9 * (q_m + q_fp));
}

template <class F>
void expectInvalid(const char* quantity, F&& make) {
  try {
    make();
    ADD_FAILURE() << "no error for " << quantity;
  } catch (const InvalidParameter& e) {
    EXPECT_EQ(e.quantity(), quantity) << e.what();
  }
}

TEST(Section, BadParametersRaiseTypedErrorNamingTheQuantity) {
  const double nan = std::nan("");
  expectInvalid("slope", [] { Section::trapezoid(5, 1, 0.03, 0.0); });
  expectInvalid("slope", [] { Section::trapezoid(5, 1, 0.03, -0.001); });
  expectInvalid("bottom_width", [] { Section::rectangle(0.0, 0.03, 0.001); });
  expectInvalid("bottom_width", [] { Section::trapezoid(-1, 1, 0.03, 0.001); });
  expectInvalid("manning_n", [] { Section::trapezoid(5, 1, 0.0, 0.001); });
  expectInvalid("manning_n", [nan] { Section::trapezoid(5, 1, nan, 0.001); });
  expectInvalid("side_slope", [nan] { Section::trapezoid(5, nan, 0.03, 0.001); });
  expectInvalid("diameter", [] { Section::circle(0, 0.013, 0.001); });
  expectInvalid("floodplain_n", [] { Section::twoStage(5, 1, 1, 20, 0.03, 0, 0.001); });
  const Section pipe = Section::circle(0.5, 0.013, 0.002);
  expectInvalid("discharge", [&] { pipe.normalDepth(1.01 * pipe.capacity()); });
  expectInvalid("discharge", [&] { pipe.normalDepth(-1); });
  expectInvalid("discharge", [&] { pipe.normalDepth(nan); });
  SectionSpec spec;  // everything unset
  expectInvalid("bottom_width", [&] { Section::fromSpec(spec); });
}

// Manning's formula Q = (1/n) A R^(2/3) √S (Manning 1891; common practice):
// scaling every n by f divides the discharge at any depth by f; a wider
// rectangle carries what the formula gives for its own width.
TEST(SectionScaling, RoughnessAndWidthMultipliers) {
  const Section two = Section::twoStage(12, 2, 2.5, 80, 0.035, 0.07, 0.001);
  const Section rough = two.withRoughnessScaled(1.5);
  for (double y : {0.5, 2.0, 3.5}) EXPECT_NEAR(rough.discharge(y), two.discharge(y) / 1.5, 1e-9 * two.discharge(y)) << y;
  EXPECT_DOUBLE_EQ(rough.manningN(), 0.035 * 1.5);

  const Section rect = Section::rectangle(10, 0.03, 0.002).withWidthScaled(2.0);
  const double y = 1.2, b = 20, a = b * y, r = a / (b + 2 * y);
  EXPECT_NEAR(rect.discharge(y), a * std::pow(r, 2.0 / 3.0) * std::sqrt(0.002) / 0.03, 1e-9);

  const Section pipe = Section::circle(1.0, 0.013, 0.01);
  EXPECT_NEAR(pipe.withRoughnessScaled(2.0).capacity(), pipe.capacity() / 2, 1e-9 * pipe.capacity());
  EXPECT_THROW((void)two.withRoughnessScaled(0.0), reachwise::InvalidParameter);
  EXPECT_THROW((void)two.withWidthScaled(std::nan("")), reachwise::InvalidParameter);
}
