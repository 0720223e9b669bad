// A lake in the middle of a small network: two tributaries flow into it and
// the lake's outflow enters the reach below (NetworkRouteOptions::lake_at_top).
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
  opt.lake_at_top = {nullptr, nullptr, &lake};
  opt.lake_results = &lakes;
  Capture cap;
  const NetworkResults r = routeNetwork(p, hourly(steps), f, opt, &cap);

  ASSERT_EQ(lakes.size(), 3u);
  EXPECT_FALSE(lakes[0].routed);
  ASSERT_TRUE(lakes[2].routed);
  const LakeRouting& m = lakes[2];
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
  plain.lake_at_top.clear();
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
  opt.lake_at_top = {nullptr, nullptr, &capped};
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
