// Restarting from a saved state (run::route with OutputRequest::state_nc
// and RouteRequest::initial_state): a record routed in two pieces, the
// second started from the first's end state, against the record routed
// whole, on a network with a confluence, a lake and a bifurcation
// (tests/support/StateNetwork.hpp); and the checks that bind a state to a
// run (network, method, step, time).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <map>
#include <span>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/SavedState.hpp"
#include "reachwise/run/Route.hpp"
#include "support/Scratch.hpp"
#include "support/StateNetwork.hpp"
#include "support/Errors.hpp"

using namespace reachwise;

namespace {

/// Keeps every reach's outflow series, by reach id.
struct Keep : routing::SeriesSink {
  const network::NetworkPlan* plan = nullptr;
  std::map<std::uint32_t, std::vector<double>> q;
  void write(std::uint32_t reach, std::span<const double> qs, std::span<const double>,
             std::span<const double>) override {
    q[reach].assign(qs.begin(), qs.end());
  }
};

struct Piece {
  run::RouteSummary summary;
  std::map<std::string, std::vector<double>> outflow;  // by reach id
};

class SavedState : public ::testing::Test {
protected:
  testsupport::TempDir dir;
  std::string at(const std::string& name) const { return (dir.path() / name).string(); }

  void SetUp() override {
    testsupport::writeStateNetwork(at("net.gpkg"), testsupport::stateLines());
    testsupport::writeStateLakes(at("lakes.gpkg"));
    testsupport::writeStateInflow(at("whole.csv"), 0, 71);
    testsupport::writeStateInflow(at("first.csv"), 0, 36);
    testsupport::writeStateInflow(at("second.csv"), 36, 71);
  }

  Piece route(routing::Method method, const std::string& inflow, const std::string& save = "",
              const std::string& start = "", const std::string& network = "net.gpkg") {
    run::RouteRequest r;
    r.network.path = at(network);
    r.network.lakes = at("lakes.gpkg");
    r.forcing.inflow = at(inflow);
    r.method = method;
    r.threads = 1;
    if (!save.empty()) r.outputs.state_nc = at(save);
    if (!start.empty()) r.initial_state = at(start);
    Keep keep;
    r.sinks = {&keep};
    Piece p;
    p.summary = run::route(r);
    for (const auto& [i, q] : keep.q) p.outflow[p.summary.plan.reach_id[i]] = q;
    return p;
  }
};

using testsupport::contains;
using testsupport::errorOf;

}  // namespace

// The whole 72 hours against hours 0–36 saved and 36–71 started from the
// save. Every scheme advances from the flows at its section ends (and a
// lake from its storage) alone, on a grid and with parameters the state
// carries: the state is the whole of what the next step depends on (the
// Muskingum recurrence, Chow, Maidment & Mays 1988 §8.4; level pool, ibid.
// §8.2). The storms peak in the first half and the flows never fall below
// their first values, so the first half chooses the whole run's numerics
// (checked below), and the pieces must give the whole run's numbers. The
// same operations on the same doubles make them equal to the last bit;
// the tolerance, 1e-12 of the largest flow, leaves room for a compiler
// that contracts differently in the two paths (fused multiply-add).
TEST_F(SavedState, TwoChainedHalvesEqualOneWholeRun) {
  for (const routing::Method method :
       {routing::Method::VariableParameter, routing::Method::ConstantParameter, routing::Method::Muskingum}) {
    const std::string name = routing::methodName(method);
    SCOPED_TRACE(name);
    const std::string state = name + ".nc";
    const Piece whole = route(method, "whole.csv");
    const Piece first = route(method, "first.csv", state);
    ASSERT_TRUE(std::filesystem::exists(at(state)));
    const Piece second = route(method, "second.csv", "", state);
    const auto& plan = whole.summary.plan;
    ASSERT_EQ(plan.size(), 6u);
    // The first half chose the numerics of the whole run (the premise).
    for (std::uint32_t i = 0; i < plan.size(); ++i) {
      const auto& w = whole.summary.results.reaches[i].numerics;
      const auto& f = first.summary.results.reaches[i].numerics;
      EXPECT_EQ(w.subreaches, f.subreaches) << plan.reach_id[i];
      EXPECT_EQ(w.substeps, f.substeps) << plan.reach_id[i];
      EXPECT_EQ(w.reference_q_m3s, f.reference_q_m3s) << plan.reach_id[i];
    }
    // Its numerics fit the second half's flows: no warning about them.
    for (const auto& w : second.summary.results.warnings) EXPECT_EQ(w.find("continue a saved state"), std::string::npos) << w;
    double peak = 0, worst = 0;
    for (const auto& [id, q] : whole.outflow) peak = std::max(peak, *std::max_element(q.begin(), q.end()));
    for (const auto& [id, q] : whole.outflow) {
      const auto& a = first.outflow.at(id);
      const auto& b = second.outflow.at(id);
      ASSERT_EQ(q.size(), 72u);
      ASSERT_EQ(a.size(), 37u);
      ASSERT_EQ(b.size(), 36u);
      for (std::size_t n = 0; n < a.size(); ++n) worst = std::max(worst, std::abs(a[n] - q[n]));
      for (std::size_t n = 0; n < b.size(); ++n) {
        worst = std::max(worst, std::abs(b[n] - q[36 + n]));
        EXPECT_NEAR(b[n], q[36 + n], 1e-12 * peak) << id << " hour " << 36 + n;
      }
      // The continued run's first sample is the saved run's last.
      EXPECT_EQ(b.front(), a.back()) << id;
    }
    // The lake: level and outflow.
    const auto* lw = whole.summary.lake("L");
    const auto* l2 = second.summary.lake("L");
    ASSERT_TRUE(lw && l2);
    for (std::size_t n = 0; n < 36; ++n) {
      EXPECT_NEAR(l2->routing.result.level_m[n], lw->routing.result.level_m[36 + n], 1e-12 * 100) << n;
      EXPECT_NEAR(l2->routing.result.outflow_m3s[n], lw->routing.result.outflow_m3s[36 + n], 1e-12 * peak) << n;
    }
    // The volume balance of the pieces: the second starts from the
    // storage the first ended with, so what entered, left and stayed adds
    // up to the whole run's (to round-off of sums of ~1e7 m3 over 72
    // steps: 1e-9 relative), and each piece's balance closes as the
    // whole's does.
    const auto& vw = whole.summary.results.volume;
    const auto& v1 = first.summary.results.volume;
    const auto& v2 = second.summary.results.volume;
    const double entered = vw.inflow_m3 + vw.lateral_m3;
    EXPECT_NEAR(v1.inflow_m3 + v2.inflow_m3, vw.inflow_m3, 1e-9 * entered);
    EXPECT_NEAR(v1.outflow_m3 + v2.outflow_m3, vw.outflow_m3, 1e-9 * entered);
    EXPECT_NEAR(v1.storage_change_m3 + v2.storage_change_m3, vw.storage_change_m3, 1e-9 * entered);
    const double error_whole = entered - vw.outflow_m3 - vw.storage_change_m3;
    const double error_pieces = (v1.inflow_m3 + v1.lateral_m3 - v1.outflow_m3 - v1.storage_change_m3) +
                                (v2.inflow_m3 + v2.lateral_m3 - v2.outflow_m3 - v2.storage_change_m3);
    EXPECT_NEAR(error_pieces, error_whole, 1e-9 * entered);
    std::printf("%s: largest difference whole vs pieces %.3g m3/s (peak %.1f m3/s); balance error whole %.4g m3, "
                "pieces %.4g m3\n",
                name.c_str(), worst, peak, error_whole, error_pieces);
  }
}

// The state names its method, step and time; the continued run must match
// them, and the network must have the same reaches and lakes.
TEST_F(SavedState, AStateThatDoesNotFitTheRunIsRefused) {
  route(routing::Method::ConstantParameter, "first.csv", "mc.nc");
  const std::string state = at("mc.nc");
  // Method.
  std::string e = errorOf([&] { route(routing::Method::VariableParameter, "second.csv", "", "mc.nc"); });
  EXPECT_TRUE(contains(e, state) && contains(e, "`mc`") && contains(e, "`vpmc`")) << e;
  // Time: the whole record starts 36 hours before the state.
  e = errorOf([&] { route(routing::Method::ConstantParameter, "whole.csv", "", "mc.nc"); });
  EXPECT_TRUE(contains(e, state) && contains(e, "2026-05-02T12:00:00Z") && contains(e, "2026-05-01T00:00:00Z")) << e;
  // Network: a reach more in the state, a reach missing from it (D, a branch below the lake).
  testsupport::writeStateNetwork(at("less.gpkg"), testsupport::stateLines("D"));
  e = errorOf([&] { route(routing::Method::ConstantParameter, "second.csv", "", "mc.nc", "less.gpkg"); });
  EXPECT_TRUE(contains(e, state) && contains(e, "reach D") && contains(e, "network does not")) << e;
  route(routing::Method::ConstantParameter, "first.csv", "less.nc", "", "less.gpkg");
  e = errorOf([&] { route(routing::Method::ConstantParameter, "second.csv", "", "less.nc"); });
  EXPECT_TRUE(contains(e, at("less.nc")) && contains(e, "reach D") && contains(e, "not in the saved state")) << e;
  // Step: the same record resampled to 30 minutes.
  e = errorOf([&] {
    run::RouteRequest r;
    r.network.path = at("net.gpkg");
    r.network.lakes = at("lakes.gpkg");
    r.forcing.inflow = at("second.csv");
    r.forcing.dt_s = 1800;
    r.method = routing::Method::ConstantParameter;
    r.initial_state = state;
    run::route(r);
  });
  EXPECT_TRUE(contains(e, state) && contains(e, "3600 s") && contains(e, "1800 s")) << e;
  // A state file is an output: it may not replace an input.
  e = errorOf([&] { route(routing::Method::ConstantParameter, "first.csv", "first.csv"); });
  EXPECT_TRUE(contains(e, "--save-state") && contains(e, "--inflow")) << e;
  // The diffusion method has no state to save.
  e = errorOf([&] { route(routing::Method::DiffusionWave, "first.csv", "diffusion.nc"); });
  EXPECT_TRUE(contains(e, "diffusion") && contains(e, "save_state")) << e;
  EXPECT_FALSE(std::filesystem::exists(at("diffusion.nc")));
}

// A flood arriving after a quiet first piece: the first piece's numerics
// were chosen for base flow, and the continued run says so (a warning
// naming a reach) rather than pass for an unbroken run.
TEST_F(SavedState, AContinuationOutsideTheSavedFlowsIsWarnedAbout) {
  testsupport::writeStateInflow(at("late-first.csv"), 0, 36, true);
  testsupport::writeStateInflow(at("late-second.csv"), 36, 71, true);
  route(routing::Method::ConstantParameter, "late-first.csv", "late.nc");
  const Piece second = route(routing::Method::ConstantParameter, "late-second.csv", "", "late.nc");
  std::size_t warned = 0;
  for (const auto& w : second.summary.results.warnings)
    if (contains(w, "continue a saved state") && contains(w, "above any the saving run saw")) ++warned;
  EXPECT_EQ(warned, 1u);
  std::size_t apart = 0;
  for (const auto& r : second.summary.results.reaches) apart += r.numerics.above_saved_flows ? 1 : 0;
  EXPECT_GE(apart, 3u);  // at least the head reaches E, F and B, whose inflow is the storm itself
}
