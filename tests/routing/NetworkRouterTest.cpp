#include "reachwise/routing/NetworkRouter.hpp"
#include "routing/RouterFixtures.hpp"

#include <gtest/gtest.h>

#include <Eigen/Sparse>
#include <cmath>
#include <map>
#include <mutex>
#include <numbers>
#include <random>
#include <string>

using namespace reachwise;
using namespace reachwise::routing;
using network::NetworkPlan;

namespace {

using routertest::Capture;
using routertest::hourly;
using routertest::storm;

/// A seeded random tree of n reaches in topological order (upstream first):
/// reach j of the "outlet-first" numbering drains into a random earlier one.
NetworkPlan randomTree(std::size_t n, std::mt19937& rng) {
  std::uniform_real_distribution<double> u(0, 1);
  std::vector<std::size_t> down(n, n);  // in outlet-first numbering
  for (std::size_t j = 1; j < n; ++j) down[j] = std::uniform_int_distribution<std::size_t>(0, j - 1)(rng);
  NetworkPlan p;
  std::vector<std::vector<std::uint32_t>> ups(n), downs(n);
  for (std::size_t j = 1; j < n; ++j) {
    const auto a = static_cast<std::uint32_t>(n - 1 - j), b = static_cast<std::uint32_t>(n - 1 - down[j]);
    ups[b].push_back(a);
    downs[a].push_back(b);
  }
  p.up_offset.push_back(0);
  p.down_offset.push_back(0);
  for (std::size_t i = 0; i < n; ++i) {
    p.reach_id.push_back("R" + std::to_string(i));
    p.fid.push_back(static_cast<std::int64_t>(i));
    p.record.push_back(static_cast<std::uint32_t>(i));
    p.length_m.push_back(1000 + 9000 * u(rng));
    hydraulics::SectionSpec s;
    s.bottom_width_m = 3 + 20 * u(rng);
    s.side_slope = 2 * u(rng);
    s.manning_n = 0.03 + 0.02 * u(rng);
    s.bed_slope = 0.0005 + 0.005 * u(rng);
    p.section.push_back(hydraulics::Section::fromSpec(s));
    // K in [0.7, 2.5] h and X in [0, 0.2] keep Muskingum's coefficients
    // non-negative at Δt = 1 h (2KX <= Δt <= 2K(1 − X)).
    p.muskingum_k_s.push_back(3600 * (0.7 + 1.8 * u(rng)));
    p.muskingum_x.push_back(0.2 * u(rng));
    p.basin.push_back(0);
    p.strahler.push_back(1);
    p.top.push_back({double(i), 0});
    p.bottom.push_back({double(i), 1});
    for (auto a : ups[i]) p.up_reach.push_back(a), p.up_fraction.push_back(1.0);
    for (auto b : downs[i]) p.down_reach.push_back(b);
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  return p;
}

MemoryForcing randomForcing(const NetworkPlan& p, std::size_t steps, std::mt19937& rng) {
  std::uniform_real_distribution<double> u(0, 1);
  MemoryForcing f;
  f.inflow_m3s.resize(p.size());
  f.lateral_m3s.resize(p.size());
  for (std::uint32_t i = 0; i < p.size(); ++i) {
    if (p.isHeadwater(i)) f.inflow_m3s[i] = storm(steps, 1 + 4 * u(rng), 50 * u(rng), 10 * u(rng), 6 + 20 * u(rng));
    if (u(rng) < 0.5) f.lateral_m3s[i] = storm(steps, 0.2 * u(rng), 8 * u(rng), 10 * u(rng), 6 + 20 * u(rng));
  }
  return f;
}


}  // namespace

// Independent oracle: linear Muskingum network routing in matrix form. With
// one sub-reach and one sub-step per reach, O^{n+1} = C1∘I^{n+1} + C2∘I^n +
// C3∘O^n + Cl∘L̄ and I = A O + P (A: upstream adjacency), so each step solves
// the lower-triangular system (E − diag(C1) A) O^{n+1} = rhs with Eigen.
// Coefficients from Chow, Maidment & Mays (1988) eq. 8.4.7, written here anew.
TEST(NetworkRouter, MatchesSparseMatrixOracleOnRandomTrees) {
  for (unsigned seed : {1u, 2u, 3u, 4u, 5u}) {
    std::mt19937 rng(seed);
    const std::size_t n = 20 + seed * 37, steps = 96;
    const NetworkPlan p = randomTree(n, rng);
    const MemoryForcing f = randomForcing(p, steps, rng);
    NetworkRouteOptions opt;
    opt.reach.method = Method::Muskingum;
    opt.reach.subreaches = 1;
    opt.reach.substeps = 1;
    Capture cap;
    routeNetwork(p, hourly(steps), f, opt, &cap);

    const double dt = 3600;
    Eigen::VectorXd c1(n), c2(n), c3(n), cl(n);
    for (std::size_t i = 0; i < n; ++i) {
      const double k = p.muskingum_k_s[i], x = p.muskingum_x[i], den = k * (1 - x) + dt / 2;
      c1[i] = (dt / 2 - k * x) / den;
      c2[i] = (dt / 2 + k * x) / den;
      c3[i] = (k * (1 - x) - dt / 2) / den;
      cl[i] = dt / den;
    }
    Eigen::SparseMatrix<double> a(n, n), m(n, n);
    std::vector<Eigen::Triplet<double>> ta, tm;
    for (std::size_t i = 0; i < n; ++i) {
      tm.emplace_back(i, i, 1.0);
      for (auto k = p.up_offset[i]; k < p.up_offset[i + 1]; ++k) {
        ta.emplace_back(i, p.up_reach[k], 1.0);
        tm.emplace_back(i, p.up_reach[k], -c1[i]);
      }
    }
    a.setFromTriplets(ta.begin(), ta.end());
    m.setFromTriplets(tm.begin(), tm.end());
    auto at = [&](const std::vector<std::vector<double>>& s, std::size_t t) {
      Eigen::VectorXd v = Eigen::VectorXd::Zero(n);
      for (std::size_t i = 0; i < n; ++i)
        if (!s[i].empty()) v[i] = s[i][t];
      return v;
    };
    // Steady start: (E − A) O^0 = P^0 + L^0.
    Eigen::SparseMatrix<double> e_minus_a(n, n);
    e_minus_a.setIdentity();
    e_minus_a -= a;
    Eigen::VectorXd o = e_minus_a.triangularView<Eigen::Lower>().solve(at(f.inflow_m3s, 0) + at(f.lateral_m3s, 0));
    double worst = 0;
    for (std::size_t t = 0; t + 1 < steps; ++t) {
      const Eigen::VectorXd p0 = at(f.inflow_m3s, t), p1 = at(f.inflow_m3s, t + 1);
      const Eigen::VectorXd lbar = 0.5 * (at(f.lateral_m3s, t) + at(f.lateral_m3s, t + 1));
      const Eigen::VectorXd i0 = a * o + p0;
      const Eigen::VectorXd rhs = c1.cwiseProduct(p1) + c2.cwiseProduct(i0) + c3.cwiseProduct(o) + cl.cwiseProduct(lbar);
      o = m.triangularView<Eigen::Lower>().solve(rhs);
      for (std::size_t i = 0; i < n; ++i)
        worst = std::max(worst, std::abs(cap.q.at(i)[t + 1] - o[i]) / std::max(1.0, std::abs(o[i])));
    }
    EXPECT_LT(worst, 1e-9) << "seed " << seed;
  }
}

// Bit-identical results for any thread count.
TEST(NetworkRouter, IdenticalForOneAndTwoThreads) {
  std::mt19937 rng(77);
  const NetworkPlan p = randomTree(400, rng);
  const MemoryForcing f = randomForcing(p, 120, rng);
  Capture one, two;
  NetworkRouteOptions opt;  // vpmc, automatic grid
  opt.threads = 1;
  const NetworkResults r1 = routeNetwork(p, hourly(120), f, opt, &one);
  opt.threads = 2;
  const NetworkResults r2 = routeNetwork(p, hourly(120), f, opt, &two);
  ASSERT_EQ(one.q.size(), p.size());
  for (std::uint32_t i = 0; i < p.size(); ++i) {
    ASSERT_EQ(one.q[i], two.q[i]) << i;  // exact equality, not a tolerance
    EXPECT_EQ(r1.reaches[i].peak_q_m3s, r2.reaches[i].peak_q_m3s);
  }
}

// A sink that wants only some reaches gets only those, with the same
// values as a sink that takes them all; the rest of the run is unchanged.
TEST(NetworkRouter, SinkGetsOnlyTheReachesItWants) {
  struct EvenOnly : Capture {
    std::size_t depth_series = 0;
    void write(std::uint32_t reach, std::span<const double> qs, std::span<const double> depth,
               std::span<const double> v) override {
      EXPECT_EQ(reach % 2, 0u) << "unwanted reach " << reach;
      depth_series += depth.empty() ? 0 : 1;
      Capture::write(reach, qs, depth, v);
    }
    bool wants(std::uint32_t reach) const override { return reach % 2 == 0; }
  };
  std::mt19937 rng(91);
  const NetworkPlan p = randomTree(50, rng);
  const MemoryForcing f = randomForcing(p, 48, rng);
  Capture all;
  EvenOnly even;
  const NetworkResults ra = routeNetwork(p, hourly(48), f, {}, &all);
  const NetworkResults re = routeNetwork(p, hourly(48), f, {}, &even);
  EXPECT_EQ(even.q.size(), (p.size() + 1) / 2);
  EXPECT_EQ(even.depth_series, even.q.size());  // depth and velocity still come with a wanted reach
  for (const auto& [reach, q] : even.q) EXPECT_EQ(q, all.q.at(reach)) << reach;
  for (std::uint32_t i = 0; i < p.size(); ++i) EXPECT_EQ(ra.reaches[i].peak_depth_m, re.reaches[i].peak_depth_m);
}

// Superposition under constant parameters (linear routing): routing the
// forcing of two halves separately and adding equals routing them together.
TEST(NetworkRouter, SuperpositionUnderConstantParameters) {
  std::mt19937 rng(5);
  const NetworkPlan p = randomTree(60, rng);
  const MemoryForcing all = randomForcing(p, 100, rng);
  MemoryForcing a = all, b = all;
  for (std::uint32_t i = 0; i < p.size(); ++i) {
    (i % 2 ? a : b).inflow_m3s[i].clear();
    (i % 2 ? a : b).lateral_m3s[i].clear();
  }
  NetworkRouteOptions opt;
  opt.reach.method = Method::ConstantParameter;
  opt.reach.reference_q_m3s = 40;  // fixed, so the parameters do not depend on the forcing
  Capture ca, cb, cab;
  routeNetwork(p, hourly(100), a, opt, &ca);
  routeNetwork(p, hourly(100), b, opt, &cb);
  routeNetwork(p, hourly(100), all, opt, &cab);
  for (std::uint32_t i = 0; i < p.size(); ++i)
    for (std::size_t t = 0; t < 100; ++t)
      EXPECT_NEAR(ca.q[i][t] + cb.q[i][t], cab.q[i][t], 1e-9 * std::max(1.0, cab.q[i][t]));
}

// Volume balance over the network: everything that entered (point inflows
// and lateral inflows) left through the outlet or is still stored.
TEST(NetworkRouter, VolumeBalanceAtTheOutlet) {
  std::mt19937 rng(11);
  const NetworkPlan p = randomTree(150, rng);
  const MemoryForcing f = randomForcing(p, 200, rng);
  for (Method m : {Method::ConstantParameter, Method::VariableParameter}) {
    NetworkRouteOptions opt;
    opt.reach.method = m;
    const NetworkResults r = routeNetwork(p, hourly(200), f, opt);
    double entered = 0, out = 0, stored = 0, internal = 0;
    for (std::uint32_t i = 0; i < p.size(); ++i) {
      const VolumeBalance& v = r.reaches[i].volume;
      entered += v.lateral_m3;
      internal += v.inflow_m3;
      stored += v.storage_change_m3;
      if (p.isOutlet(i)) out += v.outflow_m3;
      else internal -= v.outflow_m3;
    }
    const double top_less_handed = internal;  // the top inflows less the upstream outflows
    entered += internal;
    const double tol = m == Method::ConstantParameter ? 1e-9 : 1e-2;
    EXPECT_NEAR((entered - out - stored) / entered, 0.0, tol) << int(m);

    // The network balance the results carry: its inflows are the forcing's
    // own volumes (trapezoidal rule on the hourly samples, summed here), its
    // outflow and storage those of the reaches above. A reach's outflow
    // volume is summed over its sub-steps while the reach below sees the
    // hourly samples only: the top inflows less the upstream outflows differ
    // from the point inflow by that hand-over volume, which the balance
    // carries and counts in its error.
    double point = 0, lateral = 0;
    for (std::uint32_t i = 0; i < p.size(); ++i)
      for (std::size_t n = 0; n + 1 < 200; ++n) {
        if (!f.inflow_m3s[i].empty()) point += 0.5 * 3600 * (f.inflow_m3s[i][n] + f.inflow_m3s[i][n + 1]);
        if (!f.lateral_m3s[i].empty()) lateral += 0.5 * 3600 * (f.lateral_m3s[i][n] + f.lateral_m3s[i][n + 1]);
      }
    EXPECT_NEAR(r.volume.inflow_m3 / point, 1.0, 1e-12);
    EXPECT_NEAR(r.volume.lateral_m3 / lateral, 1.0, 1e-12);
    EXPECT_NEAR(r.volume.outflow_m3 / out, 1.0, 1e-12);
    EXPECT_NEAR(r.volume.storage_change_m3, stored, 1e-9 * entered);
    EXPECT_NEAR(r.volume.handover_m3, top_less_handed - point, 1e-9 * entered);
    const double given = point + lateral;
    EXPECT_NEAR(r.volume.error_pct, 100 * (given - out - stored) / given, 1e-9);
    // The event basis: the initial flow entering the network is the point
    // and lateral forcing at the first sample, summed here from the
    // forcing; over the 199 hourly steps it brings the base volume.
    double initial = 0;
    for (std::uint32_t i = 0; i < p.size(); ++i) {
      if (!f.inflow_m3s[i].empty()) initial += f.inflow_m3s[i][0];
      if (!f.lateral_m3s[i].empty()) initial += f.lateral_m3s[i][0];
    }
    const double base = initial * 199 * 3600;
    EXPECT_NEAR(r.volume.base_m3, base, 1e-9 * base);
    const double entered_net = r.volume.inflow_m3 + r.volume.lateral_m3;
    EXPECT_NEAR(r.volume.event_error_pct,
                100 * (entered_net - r.volume.outflow_m3 - r.volume.storage_change_m3) / (entered_net - base),
                1e-9);
    // Cell updates: sub-reaches × sub-steps per reach, times the 199 steps.
    double cells = 0;
    for (const ReachSummary& s : r.reaches) cells += double(s.numerics.subreaches) * s.numerics.substeps * 199;
    EXPECT_EQ(r.cell_updates, cells);
    EXPECT_GT(r.cell_updates, double(p.size()) * 199);
  }
}

namespace {

/// The warning of `results` that contains `text`, or "" when none does.
std::string warningWith(const NetworkResults& results, const std::string& text) {
  for (const std::string& w : results.warnings)
    if (w.find(text) != std::string::npos) return w;
  return "";
}

/// One reach (plan index 0, id R0) of textbook Muskingum with K and X,
/// routed on one sub-reach and one sub-step of an hour.
NetworkResults routeMuskingumReach(double k_h, double x, const std::vector<double>& inflow) {
  std::mt19937 rng(3);
  NetworkPlan p = randomTree(1, rng);
  p.muskingum_k_s[0] = k_h * 3600;
  p.muskingum_x[0] = x;
  MemoryForcing f;
  f.inflow_m3s = {inflow};
  NetworkRouteOptions opt;
  opt.reach.method = Method::Muskingum;
  opt.reach.subreaches = 1;
  opt.reach.substeps = 1;
  return routeNetwork(p, hourly(inflow.size()), f, opt);
}

}  // namespace

// The volume warning is on the event basis (docs/methods.md, "Volume
// balance"). Textbook Muskingum with 2KX > Δt has a negative coefficient
// C0 = (Δt/2 − KX)/(K(1 − X) + Δt/2) (Chow, Maidment & Mays 1988, eq.
// 8.4.7): K = 3 h, X = 0.4, Δt = 1 h give C0 = −0.7/2.3. A jump from 10 to
// 100 m^3/s drives the next outflow to 10 + C0 × 90 = −17.4 m^3/s; the
// router clamps it to 0 and the reach gains that water. Over 600 h of base
// flow the gain is well under 1 % of all the water but, against the 6 h
// event of 90 m^3/s above base, above 1 %: the warning must say so.
TEST(NetworkRouter, VolumeWarningUsesTheEventBasis) {
  std::vector<double> in(600, 10.0);
  for (std::size_t n = 20; n < 26; ++n) in[n] = 100.0;
  const NetworkResults r = routeMuskingumReach(3, 0.4, in);
  const VolumeBalance& v = r.reaches[0].volume;
  ASSERT_GT(r.reaches[0].numerics.negative_clamps, 0u);
  EXPECT_LT(std::abs(v.error_pct), 1.0);
  EXPECT_GT(std::abs(v.event_error_pct), 1.0) << v.error_pct;
  const std::string w = warningWith(r, "1 reach with a volume error above 1 % of the event volume");
  EXPECT_NE(w.find("at reach R0"), std::string::npos) << w;

  // Without the negative coefficient (X = 0.1: C0 > 0) nothing is clamped,
  // the balance is exact and no volume warning is given.
  const NetworkResults ok = routeMuskingumReach(3, 0.1, in);
  EXPECT_LT(std::abs(ok.reaches[0].volume.event_error_pct), 1e-9);
  EXPECT_EQ(warningWith(ok, "volume error"), "");
}

// A pipe in surcharge: the X-clamp warning names surcharge, not the length
// or slope of the reach (the pipe is 500 m at S0 = 0.002, taken to 1.5 ×
// its capacity, the cause Section::capacity() defines).
TEST(NetworkRouter, XClampWarningNamesSurcharge) {
  std::mt19937 rng(4);
  NetworkPlan p = randomTree(1, rng);
  p.section[0] = hydraulics::Section::circle(1.0, 0.014, 0.002);
  p.length_m[0] = 500;
  MemoryForcing f;
  f.inflow_m3s = {storm(100, 0.2, 1.5 * p.section[0].capacity() - 0.2, 5, 24)};
  const NetworkResults r = routeNetwork(p, hourly(100), f, NetworkRouteOptions{});
  ASSERT_GT(r.reaches[0].numerics.x_clamps, 0u);
  const std::string w = warningWith(r, "D lowered to 1 + C");
  EXPECT_NE(w.find("surcharge"), std::string::npos) << w;
  EXPECT_NE(w.find(" in 1 reach with a pipe"), std::string::npos) << w;
  for (const std::string& line : r.warnings) {
    EXPECT_EQ(line.find("flat"), std::string::npos) << line;
    EXPECT_EQ(line.find("short"), std::string::npos) << line;
  }
}

// The envelope warning: the case of ReachRouterTest's envelope check
// (Muskingum, C0 = −0.7/2.3, a jump from 50 to 100 and back) dips 30.4 %
// of the rise below base flow and overshoots as much, and never goes
// negative; the warning counts the reach and its two samples.
TEST(NetworkRouter, EnvelopeWarningCountsReachesAndSamples) {
  std::vector<double> in(120, 50.0);
  for (std::size_t n = 10; n < 60; ++n) in[n] = 100.0;
  const NetworkResults r = routeMuskingumReach(3, 0.4, in);
  EXPECT_EQ(r.reaches[0].numerics.negative_clamps, 0u);
  const std::string w = warningWith(r, "envelope");
  EXPECT_NE(w.find("1 reach leaving the inflow envelope (lowest to highest inflow) by more than 1 % of the rise (2 output "
                   "samples), worst 30.43 % of the rise at reach R0"),
            std::string::npos)
      << w;
  EXPECT_EQ(warningWith(routeMuskingumReach(3, 0.1, in), "envelope"), "");  // C0 > 0: no excursion
}

TEST(NetworkRouter, ConfluenceNodesCarryBranchTiming) {
  std::mt19937 rng(21);
  const NetworkPlan p = randomTree(80, rng);
  const MemoryForcing f = randomForcing(p, 150, rng);
  const NetworkResults r = routeNetwork(p, hourly(150), f, NetworkRouteOptions{});
  std::size_t confluences = 0, outlets = 0;
  for (const NodeSummary& node : r.nodes) {
    if (node.kind == NodeKind::Outlet) ++outlets;
    if (node.kind != NodeKind::Confluence) continue;
    ++confluences;
    ASSERT_GE(node.branches.size(), 2u);
    double lo = INFINITY, hi = -INFINITY;
    for (const ConfluenceBranch& b : node.branches) lo = std::min(lo, b.peak_time_s), hi = std::max(hi, b.peak_time_s);
    EXPECT_DOUBLE_EQ(node.branch_spread_s, hi - lo);
    EXPECT_GT(node.coincidence_ratio, 0.0);
    EXPECT_LE(node.coincidence_ratio, 1.0 + 1e-9);  // a sum of waves peaks no higher than the sum of peaks
  }
  EXPECT_GT(confluences, 0u);
  EXPECT_EQ(outlets, 1u);
  EXPECT_LT(r.peak_live_series, p.size());
}

// The Ponce number of each reach (Ponce, Li & Simons 1978): T S0 (g/d)^(1/2)
// for the period T = 2 t_rise of the inflow's rise (here a storm rising
// over 12 hourly steps) at the mean depth A/T of uniform flow at the
// reference flow, on a wide rectangle, where A/T is the normal depth
// (computed here from Manning's equation for the rectangle, not from the
// router's section code). Below 30 `vpmc` hands the reach to the diffusion
// wave; told not to, it routes it itself and the run warns, naming the
// flattest reach. A steep reach stays with `vpmc`, without a warning.
TEST(NetworkRouter, PonceNumberHandsFlatReachesToTheDiffusionWave) {
  std::mt19937 rng(5);
  for (const double slope : {1e-5, 0.005}) {
    for (const double below : {kDiffusionWaveMinPonce, 0.0}) {
      NetworkPlan p = randomTree(1, rng);
      const double width = 40, n = 0.035;
      p.section[0] = hydraulics::Section::rectangle(width, n, slope);
      p.length_m[0] = 20000;
      MemoryForcing f;
      f.inflow_m3s = {storm(200, 10, 50, 5, 24)};
      NetworkRouteOptions options;
      options.reach.diffusion_below_ponce = below;
      const NetworkResults r = routeNetwork(p, hourly(200), f, options);
      const ReachNumerics& num = r.reaches[0].numerics;
      // Normal depth of the rectangle at the reference flow by bisection on
      // Q = (1/n) b y (b y / (b + 2y))^(2/3) S0^(1/2).
      double lo = 0, hi = 50;
      for (int i = 0; i < 200; ++i) {
        const double y = 0.5 * (lo + hi);
        const double q = width * y * std::pow(width * y / (width + 2 * y), 2.0 / 3.0) * std::sqrt(slope) / n;
        (q < num.reference_q_m3s ? lo : hi) = y;
      }
      const double rise_s = 12 * 3600.0;
      const double expected = 2 * rise_s * slope * std::sqrt(9.81 / lo);
      // 1e-9: the router solves the normal depth by Newton's method.
      EXPECT_NEAR(num.ponce_number / expected, 1.0, 1e-9) << slope;
      const bool flat = expected < 30;
      EXPECT_EQ(num.method, flat && below > 0 ? Method::DiffusionWave : Method::VariableParameter) << slope;
      const std::string w = warningWith(r, "Ponce number");
      if (flat && below == 0) {
        EXPECT_NE(w.find("1 reach too flat"), std::string::npos) << w;
        EXPECT_NE(w.find("at reach " + p.reach_id[0]), std::string::npos) << w;
      } else {
        EXPECT_EQ(w, "") << w;
      }
    }
  }
}

// A braid by hand: U splits into A (0.4) and B (0.6), which rejoin in D,
// the top of which the plan marks as a side-arm return. The bifurcation is
// one node at U's bottom listing both branches and their shares; the
// branches get no node of their own; D's node is a side-arm return, with
// its incoming branches like a confluence.
TEST(NetworkRouter, BifurcationIsOneNodeListingItsBranches) {
  NetworkPlan p;
  const std::vector<std::vector<std::pair<std::uint32_t, double>>> ups = {{}, {{0, 0.4}}, {{0, 0.6}}, {{1, 1.0}, {2, 1.0}}};
  const std::vector<std::vector<std::uint32_t>> downs = {{1, 2}, {3}, {3}, {}};
  p.up_offset.push_back(0);
  p.down_offset.push_back(0);
  for (std::uint32_t i = 0; i < 4; ++i) {
    p.reach_id.push_back(std::string(1, "UABD"[i]));
    p.fid.push_back(i);
    p.record.push_back(i);
    p.length_m.push_back(2000);
    hydraulics::SectionSpec s;
    s.bottom_width_m = 10;
    s.side_slope = 2;
    s.manning_n = 0.035;
    s.bed_slope = 0.001;
    p.section.push_back(hydraulics::Section::fromSpec(s));
    p.muskingum_k_s.push_back(NAN);
    p.muskingum_x.push_back(NAN);
    p.basin.push_back(0);
    p.strahler.push_back(1);
    p.side_arm_return.push_back(i == 3);
    p.top.push_back({0, 1000.0 * i});
    p.bottom.push_back({0, 1000.0 * i + 900});
    for (const auto& [u, f] : ups[i]) p.up_reach.push_back(u), p.up_fraction.push_back(f);
    for (const auto d : downs[i]) p.down_reach.push_back(d);
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  MemoryForcing f;
  f.inflow_m3s = {storm(72, 2, 30, 6, 12), {}, {}, {}};
  const NetworkResults r = routeNetwork(p, hourly(72), f, NetworkRouteOptions{});
  std::map<std::string, const NodeSummary*> by_id;
  for (const NodeSummary& node : r.nodes) by_id[node.node_id] = &node;
  EXPECT_EQ(by_id.size(), 4u);  // N:U, B:U, N:D, O:D
  EXPECT_EQ(by_id.count("N:A") + by_id.count("N:B"), 0u);
  ASSERT_EQ(by_id.count("B:U"), 1u);
  const NodeSummary& b = *by_id.at("B:U");
  EXPECT_EQ(b.kind, NodeKind::Bifurcation);
  EXPECT_DOUBLE_EQ(b.y, 900.0);  // U's bottom
  EXPECT_DOUBLE_EQ(b.peak_q_m3s, r.reaches[0].peak_q_m3s);
  ASSERT_EQ(b.outgoing.size(), 2u);
  EXPECT_EQ(b.outgoing[0].reach, 2u);  // largest share first
  EXPECT_DOUBLE_EQ(b.outgoing[0].share, 0.6);
  EXPECT_EQ(b.outgoing[1].reach, 1u);
  EXPECT_DOUBLE_EQ(b.outgoing[1].share, 0.4);
  ASSERT_EQ(by_id.count("N:D"), 1u);
  EXPECT_EQ(by_id.at("N:D")->kind, NodeKind::SideArmReturn);
  EXPECT_EQ(by_id.at("N:D")->branches.size(), 2u);
  // The shares reach the branches: A carries 0.4 / 0.6 of B's flow at the peak.
  EXPECT_NEAR(r.reaches[1].inflow_peak_m3s / r.reaches[2].inflow_peak_m3s, 0.4 / 0.6, 1e-12);
}
