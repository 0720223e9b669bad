// A reach started from a saved state (ReachRouter::route with a
// ReachState, ReachRouter::endState), and a lake from a saved storage
// (LevelPoolOptions::initial_storage_m3, substeps).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/routing/LevelPool.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "routing/RouterFixtures.hpp"

using namespace reachwise;
using namespace reachwise::routing;
using hydraulics::Section;

namespace {

constexpr double kDt = 3600;

std::vector<double> slice(const std::vector<double>& v, std::size_t first, std::size_t last) {
  return {v.begin() + static_cast<std::ptrdiff_t>(first), v.begin() + static_cast<std::ptrdiff_t>(last + 1)};
}

/// The steady state of flow q on the grid and with the numerics of `st`
/// (every section end carrying q; no lateral inflow at the first sample).
ReachState steadyWith(const ReachState& st, double q) {
  ReachState s = st;
  s.q_m3s.assign(std::size_t{st.subreaches} + 1, q);
  return s;
}

}  // namespace

// A storm peaking in the second half: the first half alone chooses other
// numerics (a lower reference flow, a smaller rating table) than the whole
// record would, so pieces continued from its state cannot equal the whole
// run made with its own numerics (the difference is printed: tens of
// percent of the peak for mc, whose parameters stay those of the base
// flow). They equal, to the last bit, a whole run made with the first
// half's grid and reference flow (and, for vpmc, a rating table holding
// every flow of the record): each scheme advances from the flows
// at its section ends alone (the Muskingum recurrence: Chow, Maidment &
// Mays 1988 §8.4), so a run is the same computation cut in two. Tolerance
// 1e-12 of the peak: room for a compiler contracting the two paths
// differently (they are measured equal).
TEST(ReachState, PiecesEqualAWholeRunWithTheSavedNumerics) {
  const ReachSpec reach{Section::trapezoid(12, 1.5, 0.035, 0.001), 15000.0, 1.5 * 3600, 0.2};
  const std::vector<double> inflow = routertest::storm(73, 5, 80, 44, 16);
  std::vector<double> lateral(inflow.size());
  for (std::size_t n = 0; n < lateral.size(); ++n) lateral[n] = 0.5 + 0.02 * inflow[n];
  for (const Method method : {Method::VariableParameter, Method::ConstantParameter, Method::Muskingum}) {
    SCOPED_TRACE(methodName(method));
    RouteOptions opt;
    opt.method = method;
    ReachRouter router;
    std::vector<double> whole, first, second, forced;
    const ReachRun w = router.route(reach, inflow, lateral, kDt, opt, whole);
    const std::vector<double> in1 = slice(inflow, 0, 36), lat1 = slice(lateral, 0, 36);
    const ReachRun f = router.route(reach, in1, lat1, kDt, opt, first);
    const ReachState saved = router.endState(f);
    ASSERT_EQ(saved.q_m3s.size(), std::size_t{saved.subreaches} + 1);
    EXPECT_EQ(saved.q_m3s.back(), first.back());
    EXPECT_EQ(saved.method, method);
    // The premise: the first half's numerics are not the whole record's
    // (muskingum's grid depends on K, X and the step only).
    if (method != Method::Muskingum) {
      EXPECT_LT(saved.reference_q_m3s, w.numerics.reference_q_m3s);
    }
    const std::vector<double> in2 = slice(inflow, 36, 72), lat2 = slice(lateral, 36, 72);
    const ReachRun s = router.route(reach, in2, lat2, kDt, opt, second, &saved);
    EXPECT_EQ(s.numerics.subreaches, saved.subreaches);
    EXPECT_EQ(s.numerics.substeps, saved.substeps);
    EXPECT_EQ(s.numerics.reference_q_m3s, saved.reference_q_m3s);
    EXPECT_EQ(second.front(), first.back());
    // The continued reach says its numerics were chosen for other flows.
    EXPECT_EQ(s.numerics.above_saved_flows, method != Method::Muskingum);
    // vpmc's table is widened to this run's flows (the saved one ends
    // below the storm's peak).
    if (method == Method::VariableParameter) {
      const ReachState after = router.endState(s);
      EXPECT_GT(after.table_max_q_m3s, saved.table_max_q_m3s);
      EXPECT_GE(after.table_max_q_m3s, *std::max_element(in2.begin(), in2.end()));
    }

    // The whole record with the first half's numerics, from the steady
    // state of its first sample (no lateral inflow then, so uniform flow;
    // lateral inflow starts with the sample, as it does in the default
    // start): the reference the pieces must meet.
    std::vector<double> no_lat0 = lateral;
    no_lat0[0] = 0;
    std::vector<double> lat1b = slice(no_lat0, 0, 36);
    // (vpmc: with the whole record's rating table, which holds every flow
    // of both pieces, so no piece widens it.)
    ReachState numerics = saved;
    if (method == Method::VariableParameter) {
      std::vector<double> scratch;
      const ReachState own = router.endState(router.route(reach, inflow, lateral, kDt, opt, scratch));
      numerics.table_min_q_m3s = own.table_min_q_m3s;
      numerics.table_max_q_m3s = own.table_max_q_m3s;
      numerics.table_nodes = own.table_nodes;
    }
    const ReachState start = steadyWith(numerics, inflow[0]);
    router.route(reach, inflow, no_lat0, kDt, opt, forced, &start);
    std::vector<double> a, b;
    const ReachRun fa = router.route(reach, in1, lat1b, kDt, opt, a, &start);
    const ReachState mid = router.endState(fa);
    router.route(reach, in2, lat2, kDt, opt, b, &mid);
    const double peak = *std::max_element(forced.begin(), forced.end());
    double worst = 0, off_default = 0;
    for (std::size_t n = 0; n <= 36; ++n) {
      EXPECT_NEAR(a[n], forced[n], 1e-12 * peak) << n;
      EXPECT_NEAR(b[n], forced[36 + n], 1e-12 * peak) << 36 + n;
      worst = std::max({worst, std::abs(a[n] - forced[n]), std::abs(b[n] - forced[36 + n])});
      off_default = std::max(off_default, std::abs(second[n] - whole[36 + n]));
    }
    std::printf("%s: pieces vs whole with the saved numerics %.3g m3/s; pieces vs whole with its own numerics "
                "%.3g m3/s (peak %.1f m3/s)\n",
                methodName(method), worst, off_default, peak);
  }
}

// A dry reach (nothing flowed) has no flows to keep: its state has no
// sub-reaches, and a reach given one starts steady, as without a state.
TEST(ReachState, ADryReachStartsSteady) {
  const ReachSpec reach{Section::rectangle(10, 0.03, 0.001), 3600.0, 3600.0, 0.5};
  ReachRouter router;
  std::vector<double> out;
  const std::vector<double> zero(5, 0.0), flow = routertest::storm(12, 2, 10, 2, 6);
  const ReachState dry = router.endState(router.route(reach, zero, {}, kDt, {}, out));
  EXPECT_EQ(dry.subreaches, 0u);
  EXPECT_TRUE(dry.q_m3s.empty());
  std::vector<double> from_dry, plain;
  router.route(reach, flow, {}, kDt, {}, from_dry, &dry);
  router.route(reach, flow, {}, kDt, {}, plain);
  EXPECT_EQ(from_dry, plain);
}

// A state the reach cannot take is refused, naming `state`.
TEST(ReachState, ABadStateIsRefused) {
  const ReachSpec reach{Section::rectangle(10, 0.03, 0.001), 3600.0, 3600.0, 0.5};
  ReachRouter router;
  std::vector<double> out;
  const std::vector<double> flow = routertest::storm(12, 2, 10, 2, 6);
  RouteOptions opt;
  opt.method = Method::ConstantParameter;
  const ReachState good = router.endState(router.route(reach, flow, {}, kDt, opt, out));
  const auto refused = [&](ReachState st, const char* part) {
    try {
      router.route(reach, flow, {}, kDt, opt, out, &st);
      ADD_FAILURE() << "accepted: " << part;
    } catch (const InvalidParameter& e) {
      EXPECT_EQ(e.quantity(), "state");
      EXPECT_NE(std::string(e.what()).find(part), std::string::npos) << e.what();
    }
  };
  ReachState st = good;
  st.q_m3s.pop_back();
  refused(st, "section flows");
  st = good;
  st.q_m3s[1] = std::nan("");
  refused(st, "section flow 1");
  st = good;
  st.method = Method::DiffusionWave;
  refused(st, "diffusion");
  st = good;
  st.method = Method::VariableParameter;  // no rating table in an mc state
  refused(st, "rating-table");
  // A reach the diffusion wave routed has no state to save.
  opt.method = Method::DiffusionWave;
  const ReachRun d = router.route(reach, flow, {}, kDt, opt, out);
  EXPECT_THROW(router.endState(d), InvalidParameter);
}

// A lake continued from its storage and sub-steps: the storage-indication
// step (Chow, Maidment & Mays 1988 §8.2) depends on the storage and the
// inflow alone, so the pieces equal the whole (tolerance as above).
TEST(ReachState, ALakeContinuesFromItsStorage) {
  const LevelPool lake(LevelStorage::prismatic(2e5, 95), OutflowRule::weir(100, 15));
  const std::vector<double> inflow = routertest::storm(73, 5, 80, 10, 16);
  const LevelPoolResult whole = lake.route(inflow, kDt);
  const LevelPoolResult first = lake.route(slice(inflow, 0, 36), kDt);
  ASSERT_EQ(first.substeps, whole.substeps);  // the first half holds the peak
  LevelPoolOptions o;
  o.initial_storage_m3 = first.storage_m3.back();
  o.substeps = first.substeps;
  const LevelPoolResult second = lake.route(slice(inflow, 36, 72), kDt, o);
  EXPECT_EQ(second.substeps, first.substeps);
  for (std::size_t n = 0; n <= 36; ++n) {
    EXPECT_NEAR(second.outflow_m3s[n], whole.outflow_m3s[36 + n], 1e-12 * 85) << n;
    EXPECT_NEAR(second.storage_m3[n], whole.storage_m3[36 + n], 1e-12 * whole.storage_m3[36 + n]) << n;
  }
  EXPECT_NEAR(first.storage_change_m3 + second.storage_change_m3, whole.storage_change_m3,
              1e-9 * whole.volume_in_m3);
  // A storage below zero is refused.
  o.initial_storage_m3 = -1;
  EXPECT_THROW(lake.route(inflow, kDt, o), InvalidParameter);
}
