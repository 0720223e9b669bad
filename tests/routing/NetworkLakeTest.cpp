// A lake in the middle of a small network: two tributaries flow into it and
// the lake's outflow enters the reach below (NetworkRouteOptions::lakes).
// Checked against the tributaries' own outflows (the lake's inflow), an RK4
// written here on dS/dt = I − C L (S/A)^1.5 with a 1 s step (the lake's
// outflow), and the network's volume balance with the lake's storage.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numbers>
#include <span>

#include "reachwise/routing/NetworkRouter.hpp"
#include "routing/RouterFixtures.hpp"

using namespace reachwise;
using namespace reachwise::routing;
using network::NetworkPlan;

namespace {

using routertest::Capture;
using routertest::hourly;
using routertest::storm;

constexpr double kArea = 2e6, kCrest = 50, kLength = 15, kDt = 3600;

/// A (0) and B (1) join at the top of C (2), the outlet.
NetworkPlan confluence() {
  NetworkPlan p;
  const double len[] = {6000, 9000, 8000};
  for (std::uint32_t i = 0; i < 3; ++i) {
    p.reach_id.push_back(std::string(1, char('A' + i)));
    p.fid.push_back(i);
    p.record.push_back(i);
    p.length_m.push_back(len[i]);
    hydraulics::SectionSpec s;
    s.bottom_width_m = 10 + 5 * i;
    s.side_slope = 1.5;
    s.manning_n = 0.035;
    s.bed_slope = 0.001;
    p.section.push_back(hydraulics::Section::fromSpec(s));
    p.muskingum_k_s.push_back(3600 * (1.0 + 0.3 * i));
    p.muskingum_x.push_back(0.2);
    p.basin.push_back(0);
    p.strahler.push_back(i == 2 ? 2 : 1);
    p.top.push_back({double(i), 0});
    p.bottom.push_back({double(i), 1});
  }
  p.up_offset = {0, 0, 0, 2};
  p.up_reach = {0, 1};
  p.up_fraction = {1.0, 1.0};
  p.down_offset = {0, 1, 2, 2};
  p.down_reach = {2, 2};
  return p;
}

/// RK4, 1 s step, inflow linear between the samples; storage counted from the crest.
std::vector<double> rk4Outflow(const std::vector<double>& inflow) {
  const auto q = [](double s) { return s > 0 ? kBroadCrestedWeirCoefficient * kLength * std::pow(s / kArea, 1.5) : 0.0; };
  const auto in = [&](double t) {
    const auto i = static_cast<std::size_t>(t / kDt);
    if (i + 1 >= inflow.size()) return inflow.back();
    const double w = t / kDt - double(i);
    return inflow[i] + w * (inflow[i + 1] - inflow[i]);
  };
  double s = kArea * std::pow(inflow[0] / (kBroadCrestedWeirCoefficient * kLength), 2.0 / 3.0), t = 0;
  std::vector<double> out{q(s)};
  for (std::size_t n = 0; n + 1 < inflow.size(); ++n) {
    for (int j = 0; j < int(kDt); ++j) {
      const auto f = [&](double tt, double ss) { return in(tt) - q(ss); };
      const double k1 = f(t, s), k2 = f(t + 0.5, s + 0.5 * k1), k3 = f(t + 0.5, s + 0.5 * k2), k4 = f(t + 1, s + k3);
      s += (k1 + 2 * k2 + 2 * k3 + k4) / 6;
      t += 1;
    }
    out.push_back(q(s));
  }
  return out;
}

double trapezoids(const std::vector<double>& q) {
  double v = 0;
  for (std::size_t n = 0; n + 1 < q.size(); ++n) v += 0.5 * kDt * (q[n] + q[n + 1]);
  return v;
}

}  // namespace

TEST(NetworkLake, TributariesFillALakeWhoseOutflowEntersTheReachBelow) {
  const NetworkPlan p = confluence();
  const std::size_t steps = 120;
  MemoryForcing f;
  f.inflow_m3s = {storm(steps, 4, 120, 5, 18), storm(steps, 6, 80, 9, 24), {}};
  f.lateral_m3s = {{}, {}, storm(steps, 1, 10, 8, 20)};
  const LevelPool lake(LevelStorage::prismatic(kArea, kCrest), OutflowRule::weir(kCrest, kLength), "lake M");

  NetworkRouteOptions opt;
  opt.reach.method = Method::ConstantParameter;
  opt.threads = 1;
  std::vector<LakeRouting> lakes;
  opt.lakes = {{&lake, {2}, {1.0}, {0, 1}}};  // at the top of C, A and B flowing in
  opt.lake_results = &lakes;
  Capture cap;
  const NetworkResults r = routeNetwork(p, hourly(steps), f, opt, &cap);

  ASSERT_EQ(lakes.size(), 1u);
  ASSERT_TRUE(lakes[0].routed);
  const LakeRouting& m = lakes[0];
  // The lake takes the tributaries' outflows, summed.
  for (std::size_t n = 0; n < steps; ++n)
    ASSERT_NEAR(m.inflow_m3s[n], cap.q[0][n] + cap.q[1][n], 1e-12 * m.inflow_m3s[n]) << n;
  // Its outflow against RK4 at 1 s on that inflow: within 0.5 % of the peak.
  const auto ref = rk4Outflow(m.inflow_m3s);
  const auto& out = m.result.outflow_m3s;
  const double ref_peak = *std::max_element(ref.begin(), ref.end());
  double worst = 0;
  for (std::size_t n = 0; n < steps; ++n) worst = std::max(worst, std::abs(out[n] - ref[n]));
  EXPECT_LT(worst, 0.005 * ref_peak) << worst;
  const auto in_pk = std::max_element(m.inflow_m3s.begin(), m.inflow_m3s.end());
  const auto out_pk = std::max_element(out.begin(), out.end());
  EXPECT_NEAR(*out_pk / ref_peak, 1.0, 0.005);
  // Attenuated and late.
  EXPECT_LT(*out_pk, 0.9 * *in_pk);
  EXPECT_GT(out_pk - out.begin(), in_pk - m.inflow_m3s.begin());
  // The reach below takes the lake's outflow as its top inflow.
  EXPECT_NEAR(r.reaches[2].volume.inflow_m3 / trapezoids(out), 1.0, 1e-12);
  // The network's balance holds with the lake's storage in it.
  double stored = m.result.storage_change_m3;
  for (const auto& s : r.reaches) stored += s.volume.storage_change_m3;
  EXPECT_NEAR(r.volume.storage_change_m3 / stored, 1.0, 1e-12);
  EXPECT_GT(m.result.storage_change_m3, 0.0) << "the lake is still above its start at the end";
  EXPECT_LT(std::abs(r.volume.error_pct), 1e-7) << r.volume.error_pct;
  std::printf("lake: inflow peak %.3f, outflow peak %.3f (RK4 %.3f), worst sample %.4g, sub-steps %zu, "
              "network volume error %.3g %%\n",
              *in_pk, *out_pk, ref_peak, worst, m.result.substeps, r.volume.error_pct);

  // Without the lake the reach below sees the tributaries' sum directly.
  NetworkRouteOptions plain = opt;
  plain.lakes.clear();
  plain.lake_results = nullptr;
  const NetworkResults r0 = routeNetwork(p, hourly(steps), f, plain);
  EXPECT_GT(r0.reaches[2].peak_q_m3s, r.reaches[2].peak_q_m3s);
}

// A lake that cannot start (no level passes the first inflow) stops the
// run with an InputError naming the reach and the quantity.
TEST(NetworkLake, LakeThatCannotPassTheFlowNamesTheReach) {
  const NetworkPlan p = confluence();
  MemoryForcing f;
  f.inflow_m3s = {std::vector<double>(10, 20.0), std::vector<double>(10, 20.0), {}};
  const LevelPool capped(LevelStorage::prismatic(1e5, 0),
                         OutflowRule::storageTable({0, 1e4, 2e4}, {0, 5, 5}), "lake Q");
  NetworkRouteOptions opt;
  opt.reach.method = Method::ConstantParameter;
  opt.lakes = {{&capped, {2}, {1.0}, {0, 1}}};
  try {
    routeNetwork(p, hourly(10), f, opt);
    ADD_FAILURE() << "no error";
  } catch (const InputError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("reach C"), std::string::npos) << m;
    EXPECT_NE(m.find("initial_level_m"), std::string::npos) << m;
    EXPECT_NE(m.find("lake Q"), std::string::npos) << m;
  }
}

namespace {

/// A plan of `n` reaches (ids A, B, ...) in topological order; `ups[i]`
/// lists (upstream reach, fraction of its outflow) for reach i.
NetworkPlan planOf(std::size_t n, const std::vector<std::vector<std::pair<std::uint32_t, double>>>& ups) {
  NetworkPlan p;
  for (std::uint32_t i = 0; i < n; ++i) {
    p.reach_id.push_back(std::string(1, char('A' + i)));
    p.fid.push_back(i);
    p.record.push_back(i);
    p.length_m.push_back(6000 + 1000.0 * i);
    hydraulics::SectionSpec s;
    s.bottom_width_m = 10 + 3 * i;
    s.side_slope = 1.5;
    s.manning_n = 0.035;
    s.bed_slope = 0.001;
    p.section.push_back(hydraulics::Section::fromSpec(s));
    p.muskingum_k_s.push_back(3600 * (1.0 + 0.2 * i));
    p.muskingum_x.push_back(0.2);
    p.basin.push_back(0);
    p.strahler.push_back(1);
    p.top.push_back({double(i), 0});
    p.bottom.push_back({double(i), 1});
  }
  std::vector<std::vector<std::uint32_t>> down(n);
  p.up_offset.push_back(0);
  for (std::uint32_t i = 0; i < n; ++i) {
    for (const auto& [u, f] : ups[i]) {
      p.up_reach.push_back(u);
      p.up_fraction.push_back(f);
      down[u].push_back(i);
    }
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
  }
  p.down_offset.push_back(0);
  for (std::uint32_t i = 0; i < n; ++i) {
    p.down_reach.insert(p.down_reach.end(), down[i].begin(), down[i].end());
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  return p;
}

/// The largest |a − b| over the samples.
double worstDifference(const std::vector<double>& a, const std::vector<double>& b) {
  double worst = 0;
  for (std::size_t n = 0; n < a.size(); ++n) worst = std::max(worst, std::abs(a[n] - b[n]));
  return worst;
}

}  // namespace

// A terminal lake: A and B end in it (outlets of the network), C is an
// outlet elsewhere. The lake takes A's and B's outflows, summed; its outflow
// against RK4 (rk4Outflow above, written here) to 0.5 % of the peak; what
// it lets out leaves the network, what it keeps is storage, and the
// network's volume balance closes with both.
TEST(NetworkLake, TerminalLakeTakesTheOutletsFlowingIntoIt) {
  const NetworkPlan p = planOf(3, {{}, {}, {}});
  const std::size_t steps = 120;
  MemoryForcing f;
  f.inflow_m3s = {storm(steps, 4, 120, 5, 18), storm(steps, 6, 80, 9, 24), storm(steps, 2, 30, 3, 12)};
  const LevelPool lake(LevelStorage::prismatic(kArea, kCrest), OutflowRule::weir(kCrest, kLength), "lake S");
  NetworkRouteOptions opt;
  opt.reach.method = Method::ConstantParameter;
  opt.threads = 1;
  NetworkLake sink;
  sink.pool = &lake;
  sink.inflow_reaches = {0, 1};
  opt.lakes = {sink};
  std::vector<LakeRouting> lakes;
  opt.lake_results = &lakes;
  Capture cap;
  const NetworkResults r = routeNetwork(p, hourly(steps), f, opt, &cap);
  ASSERT_EQ(lakes.size(), 1u);
  ASSERT_TRUE(lakes[0].routed);
  const LakeRouting& s = lakes[0];
  for (std::size_t n = 0; n < steps; ++n)
    ASSERT_NEAR(s.inflow_m3s[n], cap.q[0][n] + cap.q[1][n], 1e-12 * s.inflow_m3s[n]) << n;
  const auto ref = rk4Outflow(s.inflow_m3s);
  const double ref_peak = *std::max_element(ref.begin(), ref.end());
  const double worst = worstDifference(s.result.outflow_m3s, ref);
  EXPECT_LT(worst, 0.005 * ref_peak) << worst;  // the brief's 0.5 % of the peak
  const double in_peak = *std::max_element(s.inflow_m3s.begin(), s.inflow_m3s.end());
  EXPECT_LT(ref_peak, 0.9 * in_peak) << "the lake attenuates";
  // Balance: the network's outflow is C's plus what the lake let out; its
  // storage change the reaches' plus the lake's.
  EXPECT_NEAR(r.volume.outflow_m3, r.reaches[2].volume.outflow_m3 + s.result.volume_out_m3,
              1e-12 * r.volume.outflow_m3);
  double stored = s.result.storage_change_m3;
  for (const auto& reach : r.reaches) stored += reach.volume.storage_change_m3;
  EXPECT_NEAR(r.volume.storage_change_m3, stored, 1e-12 * std::abs(stored));
  EXPECT_GT(s.result.storage_change_m3, 0.0);
  // Closes as the plain network does (the lake's own error is round-off,
  // LevelPoolTest; the hand-over of A and B to the lake counts in the
  // network's error as between reaches): 1e-7 % as for the lake on a node.
  EXPECT_LT(std::abs(r.volume.error_pct), 1e-7) << r.volume.error_pct;
  std::printf("terminal lake: inflow peak %.3f, outflow peak %.3f (RK4 %.3f), worst sample %.4g, stored %.4g m3, "
              "spilled %.4g m3, network volume error %.3g %%\n",
              in_peak, *std::max_element(s.result.outflow_m3s.begin(), s.result.outflow_m3s.end()), ref_peak, worst,
              s.result.storage_change_m3, s.result.volume_out_m3, r.volume.error_pct);
}

// A lake with two outflowing reaches: A and B flow into it, C takes 0.7 of
// its outflow and D 0.3 (the plan's fractions below A and B, a bifurcation
// of each). Point inflow at the top of D enters the lake too (it arrives at
// the lake's node). The lake is routed once, on everything arriving; the
// shares sum to the lake's outflow to round-off; the result does not depend
// on the thread count.
TEST(NetworkLake, LakeWithTwoOutflowingReachesSharesItsOutflow) {
  const NetworkPlan p = planOf(4, {{}, {}, {{0, 0.7}, {1, 0.7}}, {{0, 0.3}, {1, 0.3}}});
  const std::size_t steps = 120;
  MemoryForcing f;
  f.inflow_m3s = {storm(steps, 4, 120, 5, 18), storm(steps, 6, 80, 9, 24), {}, storm(steps, 1, 15, 2, 10)};
  const LevelPool lake(LevelStorage::prismatic(kArea, kCrest), OutflowRule::weir(kCrest, kLength), "lake Y");
  NetworkRouteOptions opt;
  opt.reach.method = Method::ConstantParameter;
  opt.threads = 1;
  opt.lakes = {{&lake, {2, 3}, {0.7, 0.3}, {0, 1}}};
  std::vector<LakeRouting> lakes;
  opt.lake_results = &lakes;
  Capture cap;
  const NetworkResults r = routeNetwork(p, hourly(steps), f, opt, &cap);
  ASSERT_EQ(lakes.size(), 1u);
  const LakeRouting& y = lakes[0];
  ASSERT_TRUE(y.routed);
  // Everything arriving: A's and B's whole outflows (0.7 + 0.3 of each) and D's point inflow.
  for (std::size_t n = 0; n < steps; ++n) {
    const double expected = cap.q[0][n] + cap.q[1][n] + f.inflow_m3s[3][n];
    ASSERT_NEAR(y.inflow_m3s[n], expected, 1e-12 * expected) << n;
  }
  const auto ref = rk4Outflow(y.inflow_m3s);
  const double ref_peak = *std::max_element(ref.begin(), ref.end());
  const double worst = worstDifference(y.result.outflow_m3s, ref);
  EXPECT_LT(worst, 0.005 * ref_peak) << worst;
  // Each outflowing reach takes its share as its top inflow: C's and D's
  // inflow volumes (trapezoids of their top inflow) are 0.7 and 0.3 of the
  // lake's outflow samples', and together all of it.
  const double out = trapezoids(y.result.outflow_m3s);
  EXPECT_NEAR(r.reaches[2].volume.inflow_m3 / out, 0.7, 1e-12);
  EXPECT_NEAR(r.reaches[3].volume.inflow_m3 / out, 0.3, 1e-12);
  EXPECT_NEAR((r.reaches[2].volume.inflow_m3 + r.reaches[3].volume.inflow_m3) / out, 1.0, 1e-14);
  // D's point inflow is counted once, as D's (it went through the lake).
  EXPECT_NEAR(r.reaches[3].volume.point_inflow_m3, trapezoids(f.inflow_m3s[3]), 1e-9);
  EXPECT_LT(std::abs(r.volume.error_pct), 1e-7) << r.volume.error_pct;
  double stored = y.result.storage_change_m3;
  for (const auto& reach : r.reaches) stored += reach.volume.storage_change_m3;
  EXPECT_NEAR(r.volume.storage_change_m3, stored, 1e-12 * std::abs(stored));
  // The same with four threads, to the last bit.
  NetworkRouteOptions four = opt;
  four.threads = 4;
  std::vector<LakeRouting> lakes4;
  four.lake_results = &lakes4;
  const NetworkResults r4 = routeNetwork(p, hourly(steps), f, four);
  EXPECT_EQ(lakes4[0].result.outflow_m3s, y.result.outflow_m3s);
  EXPECT_EQ(r4.reaches[3].peak_q_m3s, r.reaches[3].peak_q_m3s);
  std::printf("two outflows: lake in peak %.3f, out peak %.3f (RK4 %.3f), C %.4g + D %.4g of %.4g m3, "
              "network volume error %.3g %%\n",
              *std::max_element(y.inflow_m3s.begin(), y.inflow_m3s.end()),
              *std::max_element(y.result.outflow_m3s.begin(), y.result.outflow_m3s.end()), ref_peak,
              r.reaches[2].volume.inflow_m3, r.reaches[3].volume.inflow_m3, out, r.volume.error_pct);
}

// Lakes that do not fit the plan are refused before anything is routed.
TEST(NetworkLake, LakesThatDoNotFitThePlanAreRefused) {
  const NetworkPlan p = planOf(4, {{}, {}, {{0, 0.7}, {1, 0.7}}, {{0, 0.3}}});
  MemoryForcing f;
  f.inflow_m3s = {std::vector<double>(10, 20.0), std::vector<double>(10, 20.0), {}, {}};
  const LevelPool lake(LevelStorage::prismatic(kArea, kCrest), OutflowRule::weir(kCrest, kLength), "lake Z");
  const auto refused = [&](std::vector<NetworkLake> lakes, const char* part) {
    NetworkRouteOptions opt;
    opt.lakes = std::move(lakes);
    try {
      routeNetwork(p, hourly(10), f, opt);
      ADD_FAILURE() << "not refused: " << part;
    } catch (const InvalidParameter& e) {
      EXPECT_NE(std::string(e.what()).find(part), std::string::npos) << e.what();
    }
  };
  refused({{&lake, {2, 3}, {0.7, 0.3}, {0, 1}}}, "different upstream reaches");
  refused({{&lake, {2}, {0.5}, {0, 1}}}, "sum to");
  refused({{&lake, {}, {}, {0}}}, "must be outlets");
  refused({{&lake, {2}, {1.0}, {0, 1}}, {&lake, {2}, {1.0}, {0, 1}}}, "two lakes");
}
