// Self-checks of the Saint-Venant (dynamic-wave) reference solver
// (tests/support/reference/SaintVenant.hpp), the yardstick for the reaches
// where the diffusion wave is not valid. Each check is against something
// outside the solver: an exact identity (the steady uniform state, mass
// conservation), the exact solution of the linearised equations in the
// diffusion analogy (Hayami 1951 with the dynamic hydraulic diffusivity),
// the independent diffusion-wave reference where inertia is negligible, and
// what the continuous equations guarantee on a flat reach.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "support/reference/DiffusionWave.hpp"
#include "support/reference/Hayami.hpp"
#include "support/reference/Hydrograph.hpp"
#include "support/reference/SaintVenant.hpp"

using reachwise::hydraulics::Section;
using namespace testsupport::reference;

namespace {

constexpr double kHour = 3600.0;
constexpr double kGravity = 9.81;

// The accuracy matrix's sections (bench/accuracy_matrix.cpp): a 40 m
// rectangle, a trapezoid b = 20 m, z = 2, and the same trapezoid as the
// main channel of a two-stage section (banks 2.5 m, floodplain 200 m);
// n = 0.035 in the channel, 0.06 on the floodplain.
Section rectangle(double s0) { return Section::rectangle(40, 0.035, s0); }
Section trapezoid(double s0) { return Section::trapezoid(20, 2, 0.035, s0); }
Section twoStage(double s0) { return Section::twoStage(20, 2, 2.5, 200, 0.035, 0.06, s0); }

double largestDifference(const std::vector<double>& a, const std::vector<double>& b) {
  double d = 0;
  for (std::size_t i = 0; i < a.size(); ++i) d = std::max(d, std::abs(a[i] - b[i]));
  return d;
}

}  // namespace

// Steady uniform flow solves the discrete equations exactly: every box has
// equal areas and discharges at its ends, so continuity holds, the
// momentum flux has no difference, and the pressure term g A (−S0) cancels
// the friction term g A S_f with S_f = Q^2/K^2 = S0 at normal depth. The
// only departure is how well the normal depth solves Q(y) = Q (Newton's
// method, converged quadratically below its 1e-10 stopping step), so a
// constant inflow must come out unchanged to 1e-10 of the flow (measured:
// 8e-16 at most) on the matrix's three sections, over and under the banks, on a
// flat and a steep slope.
TEST(SaintVenantReference, SteadyUniformFlowStaysSteady) {
  for (double s0 : {1e-5, 0.001}) {
    for (const Section& s : {rectangle(s0), trapezoid(s0), twoStage(s0)}) {
      const double q_bank = trapezoid(s0).discharge(2.5);
      for (double q : {0.3 * q_bank, 3 * q_bank}) {
        const std::vector<double> in(97, q);
        SaintVenantGrid grid;
        grid.cells = 40;
        grid.substeps = 2;
        grid.buffer_m = 10000;
        const SaintVenantRun run = routeSaintVenant(s, 20000, in, 900, grid);
        for (double out : run.outflow_m3s) ASSERT_NEAR(out, q, 1e-10 * q) << int(s.shape()) << " S0 " << s0 << " q " << q;
        EXPECT_NEAR(run.storage_change_m3, 0.0, 1e-10 * 20000 * s.area(s.normalDepth(q)));
        EXPECT_LT(run.max_froude, 1.0);
      }
    }
  }
}

// Mass: the continuity equation of a box is its volume balance (trapezoidal
// storage, theta-weighted end discharges), and neighbouring boxes share
// their end discharges, so over the reach and over the whole modelled
// channel the storage changes by inflow − outflow, to the Newton tolerance
// (1e-11 of the flow scale per step) and round-off. Checked on a sharp
// wave going over the banks of the two-stage section (where the top width
// jumps and Newton needs its line search) on a fixed grid: to 1e-9 of the
// event volume (measured: 3e-15); the base flow through one box end for one
// step is already 2e-3 of it, so any real leak fails.
TEST(SaintVenantReference, MassConserved) {
  const Section s = twoStage(0.001);
  const double q_bank = s.discharge(2.5);
  const double dt = 900;
  const std::vector<double> in = gammaWave(0.3 * q_bank, 1.2 * q_bank, 6 * kHour, kHour, dt, 4 * 24 * 3);
  SaintVenantGrid grid;
  grid.cells = 100;
  grid.substeps = 4;
  grid.buffer_m = 20000;
  const SaintVenantRun run = routeSaintVenant(s, 40000, in, dt, grid);
  const double event = eventVolume(in, in.front(), dt);
  ASSERT_GT(*std::max_element(run.outflow_m3s.begin(), run.outflow_m3s.end()), q_bank);  // over the banks
  EXPECT_NEAR(run.inflow_m3 - run.outflow_m3 - run.storage_change_m3, 0.0, 1e-9 * event);
  EXPECT_NEAR(run.inflow_m3 - run.end_outflow_m3 - run.domain_storage_change_m3, 0.0, 1e-9 * event);
  // The scheme's inflow volume is the trapezoidal sum of the samples (the
  // boundary discharge is the inflow at every step, linear in between).
  EXPECT_NEAR(run.inflow_m3, eventVolume(in, 0.0, dt), 1e-12 * run.inflow_m3);
}

// Where the inertia terms are negligible the Saint-Venant and the
// diffusion-wave references must agree. A weedy 40 m rectangle
// (n = 0.1; Chow 1959 Table 5-6 gives up to about 0.15 for very weedy
// reaches, from memory) at S0 = 0.002 with a wave from 20 to 100 m^3/s
// rising in 3 h: Ponce number T S0 (g/d)^(1/2) = 80 to 130 (T = 2 t_rise),
// well above the 30 of Ponce, Li & Simons 1978 (from memory), and Froude
// number 0.14 to 0.17. What the diffusion wave leaves out is then (i) the
// factor 1 − (m − 1)^2 F^2 = 0.992 on the diffusivity (see the small-wave
// test below), worth at most 0.8 % of the 32 % attenuation, 0.25 % of the
// rise, and (ii) terms of relative order 1/(T r), r = 2 g S0 / V the
// friction relaxation rate, here 1e-3 (T r = 1000 to 1850). Tolerance: 0.5 % of the inflow's
// rise for the peak and anywhere on the hydrograph (measured: 0.06 % and
// 0.16 %); each reference is converged to 0.05 % of the rise.
TEST(SaintVenantReference, AgreesWithDiffusionWaveAtHighPonceNumber) {
  const Section s = Section::rectangle(40, 0.1, 0.002);
  const double base = 20, dt = 900, length = 40000, rise_s = 3 * kHour;
  const std::vector<double> in = gammaWave(base, 4 * base, rise_s, kHour, dt, 4 * 30);
  const double rise = 4 * base;
  for (double q : {base, 5 * base}) {  // the regime claimed above
    const double y = s.normalDepth(q), d = s.area(y) / s.topWidth(y);
    ASSERT_GT(2 * rise_s * s.bedSlope() * std::sqrt(kGravity / d), 75.0);
    ASSERT_LT(q / s.area(y) / std::sqrt(kGravity * d), 0.2);
  }
  const ConvergedSaintVenant sv = convergeSaintVenant(s, length, in, dt, rise_s);
  const ConvergedRun dw = convergeDiffusionWave(s, length, in, dt, rise_s);
  ASSERT_TRUE(sv.converged) << sv.last_peak_change;
  ASSERT_TRUE(dw.converged) << dw.last_peak_change;
  const SeriesPeak ps = peakOf(sv.run.outflow_m3s), pd = peakOf(dw.run.outflow_m3s);
  ASSERT_LT(pd.value, base + 0.8 * rise);  // the reach attenuates: the comparison tests the diffusion
  EXPECT_NEAR(ps.value, pd.value, 0.005 * rise);
  EXPECT_LT(largestDifference(sv.run.outflow_m3s, dw.run.outflow_m3s), 0.005 * rise);
}

// Small waves against the exact linear solution. Linearising the
// Saint-Venant equations (beta = 1) about uniform flow Q in a prismatic
// channel and keeping the first two terms of their low-frequency expansion
// gives the diffusion analogy dQ/dt + c dQ/dx = nu d2Q/dx2 with c = dQ/dA
// and the dynamic hydraulic diffusivity
//   nu = Q / (2 T S0) (1 − (m − 1)^2 F^2),  m = c / V,  F^2 = Q^2 T / (g A^3)
// (Dooge 1973, *Linear Theory of Hydrologic Systems*; Ponce 1989,
// *Engineering Hydrology* ch. 9; both from memory; the expansion was
// re-derived for this test: the momentum equation gives
// Q = c a − (gD − (c − V)^2)/r da/dx to first order, r = 2 g S0 / V,
// D = A/T). For a wide Manning channel m = 5/3, so the inertia terms cut
// the zero-inertia diffusivity by 4 F^2 / 9. The terms left out are of
// relative order 1/(T r).
//
// Case: a 60 m rectangle, n = 0.02 (a clean, straight earth channel, Chow
// 1959 Table 5-6, from memory), S0 = 0.0015, 200 m^3/s, so F = 0.64 and
// the correction is 16 % of nu; a 1 % wave rising in 1 h over 50 km (the
// reach takes 19 % off the peak); T r = 90. The 1 % amplitude changes c
// and nu by under 1 % across the wave (nonlinear terms the linear solution
// leaves out). Tolerances: the peak within 0.5 % of the routed rise
// (measured: 0.14 %), and the whole hydrograph within 1.5 % of it
// (measured: 1.0 %, mostly the peak arriving 40 s, 0.3 % of the travel
// time, before the linear solution: the 1/(T r) and nonlinear terms). With
// the zero-inertia nu the same exact solution is 3.0 % off in the peak and
// 3.3 % on the hydrograph: it fails both, so the test sees the inertia
// terms.
TEST(SaintVenantReference, MatchesLinearisedDynamicWaveForSmallWaves) {
  const Section s = Section::rectangle(60, 0.02, 0.0015);
  const double base = 200, amplitude = 2, dt = 300, length = 50000, rise_s = kHour;
  const std::vector<double> in = gammaWave(base, amplitude, rise_s, kHour, dt, 12 * 18 + 1);
  const ConvergedSaintVenant sv = convergeSaintVenant(s, length, in, dt, rise_s);
  ASSERT_TRUE(sv.converged) << sv.last_peak_change;

  const double q = base + amplitude / 2;  // linearised about the middle of the wave
  const double y = s.normalDepth(q), area = s.area(y), width = s.topWidth(y);
  const double c = s.celerity(y), v = q / area;
  const double froude2 = q * q * width / (kGravity * area * area * area), m = c / v;
  const double nu_zero_inertia = q / (2 * width * s.bedSlope());
  const double nu = nu_zero_inertia * (1 - (m - 1) * (m - 1) * froude2);
  ASSERT_GT(std::sqrt(froude2), 0.6);                  // the inertia terms matter ...
  ASSERT_LT(nu, 0.87 * nu_zero_inertia);               // ... by more than 13 % of nu
  ASSERT_GT(2 * kGravity * s.bedSlope() / v * 2 * rise_s, 80.0);  // T r: the expansion holds

  const std::vector<double> exact = hayami(in, base, dt, length, c, nu);
  const std::vector<double> zero_inertia = hayami(in, base, dt, length, c, nu_zero_inertia);
  const double routed = peakOf(exact).value - base;
  ASSERT_LT(routed, 0.85 * amplitude);  // the reach attenuates: a test of nu
  const double peak_tolerance = 0.005 * routed, curve_tolerance = 0.015 * routed;
  EXPECT_NEAR(peakOf(sv.run.outflow_m3s).value, peakOf(exact).value, peak_tolerance);
  EXPECT_LT(largestDifference(sv.run.outflow_m3s, exact), curve_tolerance);
  // The zero-inertia diffusivity fails both.
  EXPECT_GT(std::abs(peakOf(sv.run.outflow_m3s).value - peakOf(zero_inertia).value), peak_tolerance);
  EXPECT_GT(largestDifference(sv.run.outflow_m3s, zero_inertia), curve_tolerance);
}

// A flat reach (S0 = 1e-5) and the sharp (6 h) wave of the accuracy
// matrix: Ponce number 1, where only a dynamic reference is valid. The
// refinement must settle (peak change < 0.05 % of the rise); the outflow
// must stay between the base flow and the inflow peak (what the flow of a
// friction-dominated subcritical channel does: the dynamic part of the
// disturbance is damped within a few kilometres, r = 2 g S0 / V = 2.5e-3/s;
// no maximum principle holds for the hyperbolic system, so this is checked
// to 1e-6 of the rise, not to round-off; measured: no dip or overshoot at
// all); and the buffer past x = L must not reach back: the outflow with a
// buffer three times longer differs by less than 1e-6 of the rise
// (measured: 6e-14 m^3/s, round-off).
TEST(SaintVenantReference, ConvergesOnFlatReachWithSharpWave) {
  const Section s = rectangle(1e-5);
  const double base = 0.3 * trapezoid(1e-5).discharge(2.5), rise = 4 * base, dt = 900, length = 5000;
  const std::vector<double> in = gammaWave(base, rise, 6 * kHour, kHour, dt, 4 * 120);
  ASSERT_LT(2 * 6 * kHour * 1e-5 * std::sqrt(kGravity / s.normalDepth(3 * base)), 30.0);  // low Ponce number
  const ConvergedSaintVenant sv = convergeSaintVenant(s, length, in, dt, 6 * kHour);
  ASSERT_TRUE(sv.converged) << sv.last_peak_change;
  const std::vector<double>& out = sv.run.outflow_m3s;
  EXPECT_GT(*std::min_element(out.begin(), out.end()), base - 1e-6 * rise);
  EXPECT_LT(*std::max_element(out.begin(), out.end()), base + rise);
  EXPECT_LT(peakOf(out).value, base + 0.9 * rise);  // the flat reach attenuates the sharp wave
  EXPECT_LT(sv.run.max_froude, 0.2);

  SaintVenantGrid longer = sv.grid;
  longer.buffer_m *= 3;
  const SaintVenantRun with_longer_buffer = routeSaintVenant(s, length, in, dt, longer);
  EXPECT_LT(largestDifference(with_longer_buffer.outflow_m3s, out), 1e-6 * rise);
}
