// Self-checks of the reference solvers in tests/support/reference, the
// yardstick the routing methods are measured against. Each check
// is against something outside the solvers: an exact identity (mass
// conservation, the steady uniform state) or the exact linear solution
// (Hayami 1951).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "reachwise/hydraulics/Section.hpp"
#include "support/reference/DiffusionWave.hpp"
#include "support/reference/Hayami.hpp"
#include "support/reference/Hydrograph.hpp"

using reachwise::hydraulics::Section;
using namespace testsupport::reference;

namespace {

constexpr double kHour = 3600.0;

}  // namespace

// Steady uniform flow is an exact discrete solution (every face carries the
// normal-flow discharge), so a constant inflow leaves it unchanged to round-off.
TEST(DiffusionWaveReference, SteadyUniformFlowStaysSteady) {
  const Section sections[] = {Section::rectangle(60, 0.035, 0.001), Section::trapezoid(20, 2, 0.035, 0.0002),
                              Section::twoStage(20, 2, 2.5, 200, 0.035, 0.06, 0.005)};
  for (const Section& s : sections) {
    for (double q : {5.0, 80.0, 400.0}) {
      const std::vector<double> in(97, q);
      DiffusionWaveGrid grid;
      grid.cells = 40;
      grid.substeps = 2;
      grid.buffer_m = 10000;
      const DiffusionWaveRun run = routeDiffusionWave(s, 20000, in, 900, grid);
      for (double out : run.outflow_m3s) ASSERT_NEAR(out, q, 1e-12 * q) << int(s.shape()) << " q " << q;
      EXPECT_NEAR(run.storage_change_m3, 0.0, 1e-12 * 20000 * s.area(s.normalDepth(q)));
    }
  }
}

// Mass: neighbouring cells share their face fluxes, so over the reach and
// over the whole modelled channel the storage changes by inflow − outflow
// to round-off, also for a sharp wave going over the banks of a two-stage
// section (the hardest case for Newton: the top width jumps at bank-full).
TEST(DiffusionWaveReference, MassConservedToRoundOff) {
  const Section s = Section::twoStage(20, 2, 2.5, 200, 0.035, 0.06, 0.001);
  const double q_bank = s.discharge(2.5);
  const double dt = 900;
  const std::vector<double> in = gammaWave(0.3 * q_bank, 1.2 * q_bank, 6 * kHour, kHour, dt, 4 * 24 * 4);
  DiffusionWaveGrid grid;
  grid.cells = 100;
  grid.substeps = 4;
  grid.buffer_m = 20000;
  const DiffusionWaveRun run = routeDiffusionWave(s, 40000, in, dt, grid);
  const double event = eventVolume(in, in.front(), dt);
  ASSERT_GT(*std::max_element(run.outflow_m3s.begin(), run.outflow_m3s.end()), q_bank);  // over the banks
  // Round-off: about 1e-16 of the stored volume (~1e7 m^3) per step and
  // cell sum; 1e-10 of the event volume (~1e7 m^3) leaves ample room and
  // still fails for any real leak (one cell-step of flux is ~1e-3 of it).
  EXPECT_NEAR(run.inflow_m3 - run.outflow_m3 - run.storage_change_m3, 0.0, 1e-10 * event);
  EXPECT_NEAR(run.inflow_m3 - run.end_outflow_m3 - run.domain_storage_change_m3, 0.0, 1e-10 * event);
  // The scheme's inflow volume is the trapezoidal sum of the samples.
  EXPECT_NEAR(run.inflow_m3, eventVolume(in, 0.0, dt), 1e-12 * run.inflow_m3);
}

// Lateral inflow, spread evenly over the reach, enters the cells' balances:
// mass is still conserved to round-off (same bound as above) with the
// lateral volume counted as inflow, and a lateral inflow that rises and
// then holds brings the outflow to the top inflow plus the lateral inflow
// (the steady state of continuity with q_L; exact identity), to 1e-6 of it.
TEST(DiffusionWaveReference, LateralInflowEntersTheBalance) {
  const Section s = Section::rectangle(30, 0.035, 0.002);
  const double dt = 3600, base = 5, lateral_peak = 20;
  const std::size_t samples = 72;
  std::vector<double> in(samples, base), lat(samples, lateral_peak);
  for (std::size_t i = 0; i < 7; ++i) lat[i] = lateral_peak * double(i) / 6;  // 0 -> peak over 6 h, then held
  DiffusionWaveGrid grid;
  grid.cells = 60;
  grid.substeps = 8;
  grid.buffer_m = 3000;
  const DiffusionWaveRun run = routeDiffusionWave(s, 6000, in, dt, grid, lat);
  const double lat_volume = eventVolume(lat, 0.0, dt), in_volume = eventVolume(in, 0.0, dt);
  EXPECT_NEAR(run.inflow_m3, in_volume + lat_volume, 1e-12 * run.inflow_m3);
  EXPECT_NEAR(run.inflow_m3 - run.outflow_m3 - run.storage_change_m3, 0.0, 1e-10 * lat_volume);
  EXPECT_NEAR(run.outflow_m3s.back(), base + lateral_peak, 1e-6 * (base + lateral_peak));
  EXPECT_THROW(routeDiffusionWave(s, 6000, in, dt, grid, std::vector<double>(samples, 1.0)), std::invalid_argument);
}

// Small waves: against the exact linear diffusion wave (Hayami 1951) on a
// wide rectangle, with c = dQ/dA and nu = Q / (2 T S0) at the mean flow of
// the wave (the linearisation of the zero-inertia equations; Ponce 1989
// ch. 9). The wave is 1 % of the base flow, so the nonlinear terms the
// linear solution leaves out change c and nu by about 0.4 % and 1 % across
// the wave, a few tenths of a percent of the routed rise at most; the
// reference is converged to 0.05 % of its rise. Tolerance: 0.5 % of the rise
// anywhere on the hydrograph (measured: 0.17 %). The reach halves the peak,
// so the comparison tests nu as well as c: an error of 3 % in nu or 1 % in
// c is already more than the tolerance (checked below).
TEST(DiffusionWaveReference, MatchesHayamiForSmallWaves) {
  const Section s = Section::rectangle(60, 0.035, 0.0002);
  const double base = 100, amplitude = 1.0, length = 60000, dt = 900;
  const std::vector<double> in = gammaWave(base, amplitude, 6 * kHour, kHour, dt, 4 * 72);
  const ConvergedRun ref = convergeDiffusionWave(s, length, in, dt, 6 * kHour);
  ASSERT_TRUE(ref.converged) << ref.last_peak_change;
  const double q_mid = base + amplitude / 2;
  const double y = s.normalDepth(q_mid);
  const double c = s.celerity(y), nu = q_mid / (2 * s.topWidth(y) * s.bedSlope());
  const std::vector<double> exact = hayami(in, base, dt, length, c, nu);
  const SeriesPeak pe = peakOf(exact), pr = peakOf(ref.run.outflow_m3s);
  EXPECT_NEAR(pr.value - base, pe.value - base, 0.005 * (pe.value - base));
  EXPECT_NEAR(pr.index, pe.index, 0.2);  // 3 minutes, 0.4 % of the travel time (about 14 h)
  ASSERT_LT(pe.value - base, 0.6 * amplitude);  // the reach attenuates: a real test of nu
  double worst = 0;
  for (std::size_t i = 0; i < in.size(); ++i) worst = std::max(worst, std::abs(ref.run.outflow_m3s[i] - exact[i]));
  EXPECT_LT(worst, 0.005 * (pe.value - base));
  // The tolerance discriminates: the exact solution with nu 3 % off (or c
  // 1 % off) is further than that from the exact one itself.
  for (const auto& [fc, fn] : {std::pair{1.0, 1.03}, std::pair{1.0, 0.97}, std::pair{1.01, 1.0}}) {
    const std::vector<double> off = hayami(in, base, dt, length, c * fc, nu * fn);
    double d = 0;
    for (std::size_t i = 0; i < in.size(); ++i) d = std::max(d, std::abs(off[i] - exact[i]));
    EXPECT_GT(d, 0.005 * (pe.value - base)) << fc << " " << fn;
  }
}

// The hard case of the accuracy matrix (bench/accuracy_matrix.cpp): a sharp wave to 1.5 x
// bank-full on a two-stage section, where the celerity drops by a factor of
// about four at the bank. The refinement must settle (peak change < 0.05 %
// of the rise), and the converged outflow must obey what the continuous
// equations guarantee: the zero-inertia equation is a nonlinear
// advection–diffusion equation in conservation form, so the outflow stays
// between the base flow and the inflow peak (maximum principle; Ponce 1989
// ch. 9 for the diffusion form), here to 1e-6 of the rise (the central
// face flux is not monotone in general; on the converged grid nothing
// beyond round-off was measured); and with the wave through, the outflow
// event volume is the inflow's (mass).
TEST(DiffusionWaveReference, ConvergesOnSharpOverbankWave) {
  const Section s = Section::twoStage(20, 2, 2.5, 200, 0.035, 0.06, 0.001);
  const double q_bank = s.discharge(2.5), base = 0.3 * q_bank, dt = 900;
  const std::vector<double> in = gammaWave(base, 1.2 * q_bank, 6 * kHour, kHour, dt, 4 * 72);
  const ConvergedRun ref = convergeDiffusionWave(s, 20000, in, dt, 6 * kHour);
  ASSERT_TRUE(ref.converged) << ref.last_peak_change;
  EXPECT_LT(ref.last_peak_change, 5e-4);
  const std::vector<double>& out = ref.run.outflow_m3s;
  const double rise = 1.2 * q_bank;
  EXPECT_GT(*std::min_element(out.begin(), out.end()), base - 1e-6 * rise);
  EXPECT_LT(*std::max_element(out.begin(), out.end()), base + rise);
  EXPECT_GT(peakOf(out).value, q_bank);  // the peak is still over the banks at 20 km
  const double base_volume = base * dt * static_cast<double>(in.size() - 1);
  const double in_event = eventVolume(in, base, dt);
  EXPECT_NEAR(ref.run.outflow_m3 - base_volume, in_event, 1e-4 * in_event);  // 1e-4: the tail still leaving
}
