#include "reachwise/routing/ReachRouter.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <numbers>
#include <numeric>

#include "reachwise/Error.hpp"
#include "reachwise/routing/Peak.hpp"
#include "support/reference/Hayami.hpp"

using namespace reachwise;
using namespace reachwise::routing;
using hydraulics::Section;
using testsupport::reference::hayami;

namespace {

/// Base flow plus a sin² pulse of `amplitude` lasting `duration_s`, sampled every dt.
std::vector<double> pulse(double base, double amplitude, double duration_s, double dt, std::size_t n) {
  std::vector<double> q(n, base);
  for (std::size_t i = 0; i < n; ++i) {
    const double t = i * dt;
    if (t < duration_s) q[i] += amplitude * std::pow(std::sin(std::numbers::pi * t / duration_s), 2);
  }
  return q;
}

}  // namespace

// The exact case of Muskingum (C = 1, X = 1/2; Cunge 1969, Ponce 1989 §9):
// the outflow is the inflow shifted by one step.
TEST(ReachRouter, ExactCaseShiftsInflowByOneStep) {
  ReachSpec reach{Section::rectangle(10, 0.03, 0.001), 3600.0, 3600.0, 0.5};
  RouteOptions opt;
  opt.method = Method::Muskingum;
  opt.subreaches = 1;
  opt.substeps = 1;
  const std::vector<double> in = pulse(5, 40, 10 * 3600, 3600, 30);
  std::vector<double> out;
  ReachRouter router;
  router.route(reach, in, {}, 3600, opt, out);
  for (std::size_t n = 1; n < in.size(); ++n) EXPECT_NEAR(out[n], in[n - 1], 1e-12) << n;
}

class HayamiTest : public ::testing::Test {
protected:
  // A 50 km uniform wide rectangular channel, base flow 100 m^3/s and a 5 %
  // flood wave rising over 6 h, routed on 15-minute steps.
  const Section section = Section::rectangle(60, 0.035, 0.001);
  const double length = 50000, base = 100, dt = 900;
  const std::vector<double> inflow = pulse(base, 5, 12 * 3600, dt, 200);
};

TEST_F(HayamiTest, ConstantParameterMatchesAnalyticalPeak) {
  // c and nu = Q/(2 T S0) at the same reference flow the router uses.
  const double q_ref = base + 2.5;
  const hydraulics::FlowState f = section.normalFlow(q_ref);
  const double nu = q_ref / (2 * f.top_width_m * section.bedSlope());
  const std::vector<double> ref = hayami(inflow, base, dt, length, f.celerity_ms, nu);

  RouteOptions opt;
  opt.method = Method::ConstantParameter;
  opt.reference_q_m3s = q_ref;
  std::vector<double> out;
  ReachRouter router;
  const ReachRun run = router.route({section, length}, inflow, {}, dt, opt, out);
  const Peak p_ref = findPeak(ref), p = findPeak(out);
  // Compare the rise above base flow, the part that is routed.
  EXPECT_NEAR((p.value - base) / (p_ref.value - base), 1.0, 0.01);
  EXPECT_LE(std::abs(p.index - p_ref.index), 1.0);
  EXPECT_GT(run.numerics.subreaches, 1u);
  EXPECT_FALSE(run.numerics.grid_compromise);
}

TEST_F(HayamiTest, VolumeConservedToRoundOffWithConstantParameters) {
  RouteOptions opt;
  opt.method = Method::ConstantParameter;
  std::vector<double> out;
  ReachRouter router;
  const std::vector<double> lateral = pulse(2, 8, 8 * 3600, dt, inflow.size());
  const ReachRun run = router.route({section, length}, inflow, lateral, dt, opt, out);
  const VolumeBalance& v = run.volume;
  EXPECT_GT(v.lateral_m3, 0);
  EXPECT_NEAR(v.inflow_m3 + v.lateral_m3 - v.outflow_m3 - v.storage_change_m3, 0.0,
              1e-9 * (v.inflow_m3 + v.lateral_m3));
  EXPECT_LT(std::abs(v.error_pct), 1e-7);
}

// Grid independence: doubling the sub-reach count (sub-steps follow) changes
// the routed peak by less than 0.5 %.
TEST(ReachRouter, GridIndependence) {
  const Section s = Section::trapezoid(20, 2, 0.04, 0.002);
  const double dt = 1800;
  const std::vector<double> in = pulse(20, 180, 16 * 3600, dt, 150);
  for (Method method : {Method::ConstantParameter, Method::VariableParameter}) {
    RouteOptions opt;
    opt.method = method;
    std::vector<double> a, b;
    ReachRouter router;
    const ReachRun r = router.route({s, 30000}, in, {}, dt, opt, a);
    opt.subreaches = 2 * r.numerics.subreaches;
    router.route({s, 30000}, in, {}, dt, opt, b);
    const double pa = findPeak(a).value, pb = findPeak(b).value;
    EXPECT_LT(std::abs(pa - pb) / pa, 0.005) << int(method);
  }
}

// Small waves: variable and constant parameters agree. Large waves: the
// variable-parameter peak travels at the celerity of the peak flow and
// arrives earlier (Ponce & Yevjevich 1978).
TEST(ReachRouter, VariableVersusConstantParameters) {
  const Section s = Section::trapezoid(15, 1.5, 0.035, 0.001);
  const double dt = 900;
  ReachRouter router;
  auto peaks = [&](double amplitude, Method m) {
    RouteOptions opt;
    opt.method = m;
    std::vector<double> out;
    router.route({s, 40000}, pulse(10, amplitude, 10 * 3600, dt, 240), {}, dt, opt, out);
    return findPeak(out);
  };
  const Peak small_c = peaks(0.2, Method::ConstantParameter), small_v = peaks(0.2, Method::VariableParameter);
  EXPECT_NEAR(small_v.value, small_c.value, 1e-3 * small_c.value);
  EXPECT_NEAR(small_v.index, small_c.index, 0.5);
  const Peak big_c = peaks(300, Method::ConstantParameter), big_v = peaks(300, Method::VariableParameter);
  EXPECT_LT(big_v.index, big_c.index - 1.0);
}

TEST(ReachRouter, VariableParameterVolumeErrorReportedAndSmall) {
  const Section shapes[] = {Section::trapezoid(15, 1.5, 0.035, 0.001), Section::circle(2.5, 0.014, 0.004),
                            Section::twoStage(8, 1, 2, 60, 0.035, 0.07, 0.0008)};
  const double dt = 900;
  for (Scheme scheme : {Scheme::ThreePoint, Scheme::FourPoint}) {
    for (const Section& s : shapes) {
      RouteOptions opt;
      opt.scheme = scheme;
      std::vector<double> out;
      ReachRouter router;
      const std::vector<double> in = pulse(1, 14, 8 * 3600, dt, 300);
      const ReachRun r = router.route({s, 12000}, in, pulse(0.1, 2, 6 * 3600, dt, 300), dt, opt, out);
      const VolumeBalance& v = r.volume;
      EXPECT_LT(std::abs(v.error_pct), 1.0) << int(s.shape());
      const double recomputed =
          100 * (v.inflow_m3 + v.lateral_m3 - v.outflow_m3 - v.storage_change_m3) / (v.inflow_m3 + v.lateral_m3);
      EXPECT_NEAR(v.error_pct, recomputed, 1e-9);
      EXPECT_TRUE(router.lastTable().has_value());
    }
  }
}

// The event basis of the volume balance, by hand from the test's own series:
// a steady base flow (top 20, lateral 3 m^3/s) plus a sharp pulse on each.
// Entered volume by the trapezoidal rule on the output steps (as the router
// sums it), the base volume = the first sample's total × the duration, and
// the error volume in + lateral − out − ΔS from the router's own terms (the
// identity of docs/methods.md, "Volume balance").
TEST(ReachRouter, EventVolumeErrorIsRelativeToTheVolumeAboveTheInitialFlow) {
  const Section s = Section::trapezoid(12, 2, 0.035, 0.004);
  const double dt = 900;
  const std::size_t n = 240;
  const std::vector<double> in = pulse(20, 120, 6 * 3600, dt, n), lat = pulse(3, 10, 4 * 3600, dt, n);
  double entered = 0;
  for (std::size_t i = 0; i + 1 < n; ++i) entered += 0.5 * dt * (in[i] + in[i + 1] + lat[i] + lat[i + 1]);
  const double base = (in[0] + lat[0]) * dt * double(n - 1);
  for (Method m : {Method::VariableParameter, Method::ConstantParameter}) {
    RouteOptions opt;
    opt.method = m;
    std::vector<double> out;
    ReachRouter router;
    const VolumeBalance v = router.route({s, 40000}, in, lat, dt, opt, out).volume;
    EXPECT_NEAR(v.inflow_m3 + v.lateral_m3, entered, 1e-12 * entered);
    EXPECT_NEAR(v.base_m3, base, 1e-12 * base);
    const double error_m3 = entered - v.outflow_m3 - v.storage_change_m3;
    EXPECT_NEAR(v.event_error_pct, 100 * error_m3 / (entered - base), 1e-9) << int(m);
    // The two bases differ by the ratio of the volumes (here about 3×).
    EXPECT_NEAR(v.event_error_pct * (entered - base), v.error_pct * entered, 1e-9 * entered) << int(m);
    EXPECT_GT(entered / (entered - base), 2.0);
  }
}

// A steady run has no event: the event basis is undefined (NaN), the
// all-water basis is the round-off of a steady state.
TEST(ReachRouter, EventVolumeErrorIsNaNWithoutAnEvent) {
  const Section s = Section::trapezoid(12, 2, 0.035, 0.004);
  const std::vector<double> in(50, 20.0);
  std::vector<double> out;
  ReachRouter router;
  const VolumeBalance v = router.route({s, 20000}, in, {}, 900, RouteOptions{}, out).volume;
  EXPECT_TRUE(std::isnan(v.event_error_pct));
  EXPECT_LT(std::abs(v.error_pct), 1e-9);
}

// The cause given for X clamps (docs/methods.md, "Diagnostics"), each case
// built so that one cause applies and is checked from the test's own
// numbers: a pipe taken to 1.5 × its capacity; a two-stage section (1 km floodplain) whose
// inflow rises from below to above its bank-full flow (Manning at bank
// depth); a 50 m steep narrow reach, which a wave of at least 1 m/s crosses in
// under one 900 s step; a 20 km reach at S0 = 1e-5, whose diffusion length
// Q/(T S0 c) at the reference flow is far longer than the reach.
TEST(ReachRouter, XClampsNameTheirCause) {
  const double dt = 900;
  const Section pipe = Section::circle(1.0, 0.014, 0.002);
  const Section two_stage = Section::twoStage(20, 2, 3, 1000, 0.035, 0.07, 0.0002);
  const double bank_q = two_stage.discharge(3.0);
  const Section flat = Section::rectangle(50, 0.035, 1e-5);
  struct Case {
    Section section;
    double length_m, base, amplitude;
    XClampCause cause;
  };
  const Case cases[] = {
      {pipe, 500, 0.2, 1.5 * pipe.capacity() - 0.2, XClampCause::Surcharge},
      {two_stage, 80000, 0.5 * bank_q, 3 * bank_q, XClampCause::BankFull},
      {Section::rectangle(5, 0.035, 0.005), 50, 5, 200, XClampCause::Short},
      {flat, 20000, 100, 400, XClampCause::Flat},
  };
  for (const Case& c : cases) {
    std::vector<double> out;
    ReachRouter router;
    RouteOptions vpmc_only;  // the causes of vpmc's clamps: no hand-over to the diffusion wave
    vpmc_only.diffusion_below_ponce = 0;
    const ReachRun r = router.route({c.section, c.length_m}, pulse(c.base, c.amplitude, 12 * 3600, dt, 200), {},
                                    dt, vpmc_only, out);
    ASSERT_GT(r.numerics.x_clamps, 0u) << xClampCauseName(c.cause);
    EXPECT_EQ(r.numerics.x_clamp_cause, c.cause) << xClampCauseName(r.numerics.x_clamp_cause);
    if (c.cause == XClampCause::Short) {
      EXPECT_LT(c.length_m, r.numerics.celerity_ms * dt);
    }
    if (c.cause == XClampCause::Flat) {
      const hydraulics::FlowState f = c.section.normalFlow(r.numerics.reference_q_m3s);
      EXPECT_GT(r.numerics.reference_q_m3s / (f.top_width_m * c.section.bedSlope() * f.celerity_ms), c.length_m);
    }
  }
}

// The envelope check. Textbook Muskingum on one sub-reach and one step,
// K = 3 h, X = 0.4, Δt = 1 h: C0 = (Δt/2 − KX)/(K(1 − X) + Δt/2) = −0.7/2.3
// (Chow, Maidment & Mays 1988, eq. 8.4.7). Inflow steady at 50, a jump to
// 100 held until the outflow is steady again, then back to 50. The step
// after the jump gives 50 + C0 × 50 (C0 + C1 + C2 = 1): a dip 30.4 % of
// the rise below base flow that stays positive; the step after the fall
// mirrors it above the peak (the scheme is linear); every other sample
// lies inside. The 1 % of the rise that counts as leaving the envelope is
// the project's accuracy target for the default method (docs/methods.md,
// "Diagnostics").
TEST(ReachRouter, EnvelopeExcursionsAreCountedWithoutNegativeFlows) {
  ReachSpec reach{Section::rectangle(10, 0.03, 0.001), 3600.0, 3 * 3600.0, 0.4};
  RouteOptions opt;
  opt.method = Method::Muskingum;
  opt.subreaches = 1;
  opt.substeps = 1;
  std::vector<double> in(120, 50.0);
  for (std::size_t n = 10; n < 60; ++n) in[n] = 100.0;
  std::vector<double> out;
  ReachRouter router;
  const ReachRun r = router.route(reach, in, {}, 3600, opt, out);
  const double c0 = -0.7 / 2.3;
  EXPECT_EQ(r.numerics.negative_clamps, 0u);
  EXPECT_NEAR(*std::min_element(out.begin(), out.end()), 50 + c0 * 50, 1e-9);
  EXPECT_EQ(r.numerics.envelope_exceedances, 2u);
  EXPECT_NEAR(r.numerics.envelope_excursion_pct, -100 * c0, 1e-6);

  // With a lateral inflow out of phase the outflow may exceed the highest
  // total inflow, but not the highest top plus the highest lateral inflow,
  // the envelope's top: a smooth wave routed with X = 0.1 (all
  // coefficients positive) stays inside.
  ReachSpec smooth = reach;
  smooth.muskingum_x = 0.1;
  const std::vector<double> top = pulse(50, 50, 12 * 3600, 3600, 120);
  std::vector<double> lat(120, 5.0);
  for (std::size_t n = 6; n < 30; ++n) lat[n] = 25.0;
  const ReachRun s = router.route(smooth, top, lat, 3600, opt, out);
  EXPECT_EQ(s.numerics.envelope_exceedances, 0u);
  EXPECT_EQ(s.numerics.envelope_excursion_pct, 0.0);
}

// The scheme marches forward in time, so the outflow up to a step cannot
// depend on inflow after it (common practice: causality of an explicit
// scheme). Cutting the series short, to an odd and to an even number of
// sub-step rows, must leave the earlier outflow bit for bit unchanged, also
// where the router advances two rows at once. The grid and the reference
// flow are fixed and the cut falls after the peak, so the table is the same.
TEST(ReachRouter, OutflowDoesNotDependOnLaterInflow) {
  const Section s = Section::twoStage(8, 1, 2, 60, 0.035, 0.07, 0.0008);
  // Inflow and lateral inflow still change where the series is cut (a slow
  // ramp; a lateral pulse longer than the series), so a row that read the
  // next row's forcing would show.
  std::vector<double> in = pulse(1, 30, 10 * 3600, 900, 121);
  for (std::size_t i = 0; i < in.size(); ++i) in[i] += 0.01 * i;
  const std::vector<double> lat = pulse(0.1, 2, 40 * 3600, 900, 121);
  for (Method m : {Method::VariableParameter, Method::ConstantParameter})
    for (Scheme scheme : {Scheme::ThreePoint, Scheme::FourPoint})
      for (std::uint32_t k : {1u, 3u}) {
        RouteOptions opt;
        opt.method = m;
        opt.scheme = scheme;
        opt.subreaches = 9;
        opt.substeps = k;
        opt.reference_q_m3s = 12;
        ReachRouter router;
        std::vector<double> full, cut;
        router.route({s, 15000}, in, lat, 900, opt, full);
        for (std::size_t n : {120u, 119u}) {
          router.route({s, 15000}, std::span(in).first(n), std::span(lat).first(n), 900, opt, cut);
          ASSERT_EQ(cut.size(), n);
          for (std::size_t i = 0; i < n; ++i)
            ASSERT_EQ(cut[i], full[i]) << int(m) << int(scheme) << " k=" << k << " n=" << n << " i=" << i;
        }
      }
}

// Lateral inflow alone, held constant: the steady outflow is the lateral total.
TEST(ReachRouter, SteadyLateralInflowReachesOutlet) {
  const std::vector<double> in(100, 3.0), lat(100, 7.0);
  for (Method m : {Method::ConstantParameter, Method::VariableParameter}) {
    RouteOptions opt;
    opt.method = m;
    std::vector<double> out;
    ReachRouter router;
    router.route({Section::rectangle(8, 0.04, 0.002), 5000}, in, lat, 600, opt, out);
    EXPECT_NEAR(out.back(), 10.0, 1e-9) << int(m);
  }
}

// A negative flow is never produced silently: with a grid forced far outside
// the non-negative band, dips below zero are clamped and counted.
TEST(ReachRouter, NegativeFlowsAreClampedAndCounted) {
  std::vector<double> in(60, 0.0);
  for (std::size_t i = 10; i < 14; ++i) in[i] = 500;
  RouteOptions opt;
  opt.method = Method::ConstantParameter;
  opt.subreaches = 60;  // Δx far below c Δt - ℓ ... C > 1 + D
  opt.substeps = 1;
  opt.reference_q_m3s = 250;
  std::vector<double> out;
  ReachRouter router;
  const ReachRun r = router.route({Section::rectangle(30, 0.03, 0.003), 6000}, in, {}, 3600, opt, out);
  EXPECT_GT(r.numerics.negative_clamps, 0u);
  EXPECT_TRUE(r.numerics.grid_compromise);
  for (double q : out) EXPECT_GE(q, 0.0);
}

// A router reused across reaches (as a network run's worker is) gives each
// reach exactly what a fresh router gives it: its rating table is rebuilt
// in the last one's storage and nothing else carries over. Covers a reach
// fed by lateral inflow alone (no top inflow) and a two-stage section.
TEST(ReachRouter, ReusedRouterMatchesFreshRouter) {
  const double dt = 1800;
  const std::vector<double> storm = pulse(3.0, 60.0, 18 * 3600.0, dt, 200);
  const std::vector<double> none(storm.size(), 0.0);
  const ReachSpec reaches[] = {
      {Section::trapezoid(12, 2, 0.035, 0.002), 4000},
      {Section::twoStage(6, 1.5, 1.2, 40, 0.035, 0.07, 0.001), 9000},
      {Section::rectangle(3, 0.04, 0.008), 1500},
  };
  RouteOptions opt;
  for (Method method : {Method::VariableParameter, Method::ConstantParameter}) {
    opt.method = method;
    ReachRouter reused;
    std::vector<double> out_reused, out_fresh;
    for (int pass = 0; pass < 2; ++pass) {
      for (const ReachSpec& r : reaches) {
        for (bool lateral_only : {false, true}) {
          const std::span<const double> in = lateral_only ? std::span<const double>(none) : storm;
          const std::span<const double> lat = lateral_only ? std::span<const double>(storm) : std::span<const double>();
          const ReachRun a = reused.route(r, in, lat, dt, opt, out_reused);
          ReachRouter fresh;
          const ReachRun b = fresh.route(r, in, lat, dt, opt, out_fresh);
          ASSERT_EQ(out_reused, out_fresh) << r.length_m << " lateral only " << lateral_only;
          EXPECT_EQ(a.volume.error_pct, b.volume.error_pct);
          EXPECT_GT(*std::max_element(out_reused.begin(), out_reused.end()), 1.0);
        }
      }
    }
  }
}

TEST(ReachRouter, BadInputNamesTheQuantity) {
  ReachRouter router;
  std::vector<double> out;
  const ReachSpec reach{Section::rectangle(8, 0.04, 0.002), 5000};
  auto quantity = [&](std::vector<double> in, double dt, ReachSpec r, RouteOptions o = {}) {
    try {
      router.route(r, in, {}, dt, o, out);
    } catch (const InvalidParameter& e) {
      return e.quantity();
    }
    return std::string("none");
  };
  EXPECT_EQ(quantity({1, -2, 3}, 60, reach), "inflow");
  EXPECT_EQ(quantity({1, std::nan(""), 3}, 60, reach), "inflow");
  EXPECT_EQ(quantity({1, 2, 3}, 0, reach), "dt");
  EXPECT_EQ(quantity({1, 2, 3}, 60, ReachSpec{reach.section, -5}), "length");
  RouteOptions musk;
  musk.method = Method::Muskingum;
  EXPECT_EQ(quantity({1, 2}, 60, reach, musk), "muskingum_k_h");  // K not given
  EXPECT_EQ(quantity({1, 2}, 60, ReachSpec{reach.section, 5000, 3600, 0.7}, musk), "muskingum_x");
  for (Method m : {Method::ConstantParameter, Method::VariableParameter}) {
    RouteOptions o;
    o.method = m;
    o.reference_q_m3s = -1;
    EXPECT_EQ(quantity({1, 2, 3}, 60, reach, o), "discharge");
  }
}

TEST(Peak, ParabolicInterpolationRecoversVertex) {
  // Samples of a parabola with its vertex at 4.3: the interpolated peak is exact.
  std::vector<double> q;
  for (int i = 0; i < 10; ++i) q.push_back(50 - 2 * (i - 4.3) * (i - 4.3));
  const Peak p = findPeak(q);
  EXPECT_NEAR(p.index, 4.3, 1e-12);
  EXPECT_NEAR(p.value, 50, 1e-12);
  EXPECT_EQ(riseSamples(q), 4.0);
}

// The rise starts at the last minimum before the peak: a steady base flow
// before it is not part of it.
TEST(Peak, RiseStartsAfterTheSteadyBaseFlow) {
  const std::vector<double> q = {5, 5, 5, 5, 6, 8, 11, 9, 7};
  EXPECT_EQ(riseSamples(q), 3.0);
}

// `diffusion` (docs/methods.md §6): steady inflow and lateral inflow stay
// steady (the initial state is the scheme's own steady state), and with a
// flood over it the reach's volume balances: each cell's storage changes
// by exactly its face fluxes, so in + lateral − out − Δstorage is the
// Newton tolerance's residue (continuity; common practice).
TEST(ReachRouter, DiffusionWaveSteadyAndConservative) {
  const Section s = Section::trapezoid(20, 2, 0.035, 0.0001);
  const double dt = 1800;
  RouteOptions opt;
  opt.method = Method::DiffusionWave;
  ReachRouter router;
  std::vector<double> out;
  const std::vector<double> steady(100, 20.0), lateral(100, 5.0);
  const ReachRun still = router.route({s, 15000}, steady, lateral, dt, opt, out);
  EXPECT_EQ(still.numerics.method, Method::DiffusionWave);
  for (double q : out) EXPECT_NEAR(q, 25.0, 1e-6);

  const std::vector<double> flood = pulse(20, 80, 12 * 3600, dt, 200);
  const ReachRun run = router.route({s, 15000}, flood, std::vector<double>(200, 5.0), dt, opt, out);
  const VolumeBalance& v = run.volume;
  EXPECT_NEAR(v.inflow_m3 + v.lateral_m3 - v.outflow_m3 - v.storage_change_m3, 0.0, 1e-8 * (v.inflow_m3 + v.lateral_m3));
  EXPECT_LT(findPeak(out).value, 105.0);  // attenuated below inflow peak + lateral
  EXPECT_GT(findPeak(out).index, findPeak(flood).index);  // and later
}
