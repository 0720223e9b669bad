// Routing among MPI ranks against the same routing in one process. Run by
// CTest under `mpirun -n 1`, `-n 2` and `-n 3` (tests/CMakeLists.txt).
// The reference is routing::routeNetwork without ranks, computed on rank 0
// itself: every reach must come out bit for bit the same (the router sums
// a reach's inputs in the plan's order wherever they were routed), so the
// comparisons are exact, byte for byte.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstring>
#include <map>
#include <mutex>
#include <set>
#include <span>
#include <cmath>
#include <stdexcept>

#include "reachwise/Error.hpp"
#include "reachwise/network/Partition.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"
#include "reachwise/parallel/MpiRanks.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

using namespace reachwise;

namespace {

routing::Ranks* g_ranks = nullptr;

/// Every reach's outflow, depth and velocity, as the sink got them.
class Capture final : public routing::SeriesSink {
public:
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double> d,
             std::span<const double> v) override {
    std::lock_guard lock(mutex_);
    auto& s = series[reach];
    s.q.assign(q.begin(), q.end()), s.d.assign(d.begin(), d.end()), s.v.assign(v.begin(), v.end());
  }
  bool wants(std::uint32_t reach) const override { return reach % 3 != 1; }  // not every reach
  struct Series {
    std::vector<double> q, d, v;
  };
  std::map<std::uint32_t, Series> series;

private:
  std::mutex mutex_;
};

network::NetworkPlan syntheticPlan(std::size_t reaches, std::size_t outlets, std::uint64_t seed) {
  const network::ReachTable table =
      network::toReachTable(network::generateSyntheticNetwork({reaches, outlets, seed}));
  return network::ReachGraph(table).freeze();
}

/// A storm on every headwater (its own peak time and size) and lateral
/// inflow on every third reach.
routing::MemoryForcing storm(const network::NetworkPlan& plan, std::size_t steps) {
  routing::MemoryForcing f;
  f.inflow_m3s.resize(plan.size());
  f.lateral_m3s.resize(plan.size());
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    const double peak = 2.0 + static_cast<double>(i % 7), at = 10.0 + static_cast<double>(i % 13);
    std::vector<double> q(steps);
    for (std::size_t n = 0; n < steps; ++n) {
      const double t = static_cast<double>(n);
      q[n] = 0.5 + peak * std::exp(-(t - at) * (t - at) / 30.0);
    }
    if (plan.isHeadwater(i)) f.inflow_m3s[i] = q;
    if (i % 3 == 0) {
      for (double& v : q) v *= 0.1;
      f.lateral_m3s[i] = q;
    }
  }
  return f;
}

routing::TimeAxis hourly(std::size_t steps) {
  routing::TimeAxis axis;
  axis.start_unix_s = 1'700'000'000;
  axis.dt_s = 3600;
  axis.steps = steps;
  return axis;
}

template <typename T>
bool sameBytes(const T& a, const T& b) {
  static_assert(std::is_trivially_copyable_v<T>);
  return std::memcmp(&a, &b, sizeof(T)) == 0;
}

/// Field by field (a struct's padding is no part of it), doubles by their
/// bits (NaN equals NaN).
bool sameSummary(const routing::ReachSummary& a, const routing::ReachSummary& b) {
  const auto& m = a.numerics;
  const auto& n = b.numerics;
  return sameBytes(a.peak_q_m3s, b.peak_q_m3s) && sameBytes(a.peak_time_s, b.peak_time_s) &&
         sameBytes(a.peak_depth_m, b.peak_depth_m) && sameBytes(a.peak_velocity_ms, b.peak_velocity_ms) &&
         sameBytes(a.inflow_peak_m3s, b.inflow_peak_m3s) && sameBytes(a.inflow_peak_time_s, b.inflow_peak_time_s) &&
         sameBytes(a.attenuation_pct, b.attenuation_pct) && sameBytes(a.travel_time_s, b.travel_time_s) &&
         sameBytes(a.volume, b.volume) && m.subreaches == n.subreaches && m.substeps == n.substeps &&
         sameBytes(m.dx_m, n.dx_m) && sameBytes(m.dt_sub_s, n.dt_sub_s) &&
         sameBytes(m.reference_q_m3s, n.reference_q_m3s) && sameBytes(m.celerity_ms, n.celerity_ms) &&
         sameBytes(m.courant, n.courant) && sameBytes(m.cell_reynolds, n.cell_reynolds) && sameBytes(m.x, n.x) &&
         sameBytes(m.k_s, n.k_s) && sameBytes(m.amplitude_ratio, n.amplitude_ratio) &&
         sameBytes(m.phase_ratio, n.phase_ratio) && sameBytes(m.ponce_number, n.ponce_number) &&
         m.method == n.method && m.negative_clamps == n.negative_clamps && m.x_clamps == n.x_clamps &&
         m.surcharge_cells == n.surcharge_cells && m.x_clamp_cause == n.x_clamp_cause &&
         m.envelope_exceedances == n.envelope_exceedances &&
         sameBytes(m.envelope_excursion_pct, n.envelope_excursion_pct) && m.grid_compromise == n.grid_compromise &&
         m.above_saved_flows == n.above_saved_flows;
}

/// The same series, said to be read from a file while routing, so that the
/// router reads them ahead (ForcingProvider::readsOnDemand).
class OnDemand final : public routing::ForcingProvider {
public:
  explicit OnDemand(const routing::ForcingProvider& f) : f_(f) {}
  bool inflow(std::uint32_t r, std::span<double> out) const override { return f_.inflow(r, out); }
  bool lateral(std::uint32_t r, std::span<double> out) const override { return f_.lateral(r, out); }
  ReadsOnDemand readsOnDemand() const override { return {true, true}; }

private:
  const routing::ForcingProvider& f_;
};

/// Routes `plan` among the ranks and, on rank 0, alone; checks that rank 0
/// got exactly what one process gets. `read_ahead`: among the ranks, the
/// forcing is read ahead, each rank its own reaches' series.
void expectSameAsOneProcess(const network::NetworkPlan& plan, routing::Method method, bool read_ahead = false) {
  const std::size_t steps = 48;
  const routing::TimeAxis axis = hourly(steps);
  const routing::MemoryForcing forcing = storm(plan, steps);
  const OnDemand on_demand(forcing);
  routing::NetworkRouteOptions options;
  options.reach.method = method;
  options.threads = 1;
  const network::Partition partition = network::partitionPlan(plan, g_ranks->size());
  routing::Distribution distribution{g_ranks, partition.owner};
  options.distribution = &distribution;
  std::vector<routing::ReachState> states;
  options.final_states = &states;
  Capture shared;
  const routing::NetworkResults among = routing::routeNetwork(
      plan, axis, read_ahead ? static_cast<const routing::ForcingProvider&>(on_demand) : forcing, options, &shared);
  const auto mine = static_cast<std::size_t>(std::count(partition.owner.begin(), partition.owner.end(), g_ranks->rank()));
  // Each rank's reaches ask for inflow and lateral inflow once each.
  EXPECT_EQ(among.series_read_ahead + among.series_read_on_demand, read_ahead ? 2 * mine : 0u);
  if (g_ranks->rank() != 0) return;

  routing::NetworkRouteOptions alone_options = options;
  alone_options.distribution = nullptr;
  alone_options.threads = 2;
  std::vector<routing::ReachState> alone_states;
  alone_options.final_states = &alone_states;
  Capture alone;
  const routing::NetworkResults one = routing::routeNetwork(plan, axis, forcing, alone_options, &alone);

  ASSERT_EQ(among.reaches.size(), one.reaches.size());
  for (std::size_t i = 0; i < one.reaches.size(); ++i) {
    EXPECT_TRUE(sameSummary(among.reaches[i], one.reaches[i])) << "reach " << plan.reach_id[i];
    EXPECT_EQ(states[i].q_m3s, alone_states[i].q_m3s) << "end state of " << plan.reach_id[i];
    EXPECT_EQ(states[i].reference_q_m3s, alone_states[i].reference_q_m3s);
  }
  ASSERT_EQ(among.nodes.size(), one.nodes.size());
  for (std::size_t k = 0; k < one.nodes.size(); ++k) {
    EXPECT_EQ(among.nodes[k].node_id, one.nodes[k].node_id);
    EXPECT_TRUE(sameBytes(among.nodes[k].peak_q_m3s, one.nodes[k].peak_q_m3s)) << one.nodes[k].node_id;
    EXPECT_TRUE(sameBytes(among.nodes[k].peak_time_s, one.nodes[k].peak_time_s)) << one.nodes[k].node_id;
  }
  EXPECT_TRUE(sameBytes(among.volume, one.volume));
  EXPECT_EQ(among.warnings, one.warnings);
  EXPECT_TRUE(sameBytes(among.cell_updates, one.cell_updates));
  ASSERT_EQ(shared.series.size(), alone.series.size());
  for (const auto& [reach, s] : alone.series) {
    const auto it = shared.series.find(reach);
    ASSERT_NE(it, shared.series.end()) << plan.reach_id[reach];
    EXPECT_EQ(it->second.q, s.q) << plan.reach_id[reach];
    EXPECT_EQ(it->second.d, s.d) << plan.reach_id[reach];
    EXPECT_EQ(it->second.v, s.v) << plan.reach_id[reach];
  }
}

}  // namespace

TEST(RanksRouting, SeveralBasinsGiveWhatOneProcessGives) {
  const network::NetworkPlan plan = syntheticPlan(1500, 9, 11);
  expectSameAsOneProcess(plan, routing::Method::VariableParameter);
  expectSameAsOneProcess(plan, routing::Method::ConstantParameter);
}

TEST(RanksRouting, OneBasinCutIntoPartsGivesWhatOneProcessGives) {
  const network::NetworkPlan plan = syntheticPlan(1200, 1, 5);
  const network::Partition partition = network::partitionPlan(plan, g_ranks->size());
  if (g_ranks->size() > 1) {
    // The one basin is cut: several parts, links between ranks.
    EXPECT_GE(partition.part_work.size(), static_cast<std::size_t>(g_ranks->size()));
    EXPECT_GT(partition.cut_links, 0u);
  }
  expectSameAsOneProcess(plan, routing::Method::VariableParameter);
  // Reaches below another rank's wait for its messages; read ahead with
  // the rest, their series still arrive once.
  expectSameAsOneProcess(plan, routing::Method::VariableParameter, true);
}

TEST(RanksRouting, AReachFailingOnOneRankFailsEveryRankWithItsMessage) {
  const network::NetworkPlan plan = syntheticPlan(600, 3, 2);
  const std::size_t steps = 24;
  const routing::MemoryForcing good = storm(plan, steps);
  const network::Partition partition = network::partitionPlan(plan, g_ranks->size());
  // A headwater of the last rank fails when its forcing is read.
  const int last = g_ranks->size() - 1;
  std::uint32_t bad = 0;
  while (!(partition.owner[bad] == last && plan.isHeadwater(bad))) ++bad;
  class Failing final : public routing::ForcingProvider {
  public:
    Failing(const routing::ForcingProvider& f, std::uint32_t bad, std::string id) : f_(f), bad_(bad), id_(std::move(id)) {}
    bool inflow(std::uint32_t reach, std::span<double> out) const override {
      if (reach == bad_) {
        InputLocation at;
        at.reach_id = id_;
        at.field = "discharge";
        throw InputError(at, "a value this test refuses");
      }
      return f_.inflow(reach, out);
    }
    bool lateral(std::uint32_t reach, std::span<double> out) const override { return f_.lateral(reach, out); }

  private:
    const routing::ForcingProvider& f_;
    std::uint32_t bad_;
    std::string id_;
  } failing(good, bad, plan.reach_id[bad]);
  routing::NetworkRouteOptions options;
  options.threads = 1;
  routing::Distribution distribution{g_ranks, partition.owner};
  options.distribution = &distribution;
  std::string message;
  try {
    (void)routing::routeNetwork(plan, hourly(steps), failing, options, nullptr);
  } catch (const Error& e) {
    message = e.what();
  }
  // Every rank failed, with the failing reach's own message.
  EXPECT_NE(message.find("reach " + plan.reach_id[bad]), std::string::npos) << message;
  EXPECT_NE(message.find("a value this test refuses"), std::string::npos) << message;
  // The ranks route again afterwards, unharmed.
  Capture capture;
  const routing::NetworkResults again = routing::routeNetwork(plan, hourly(steps), good, options, &capture);
  if (g_ranks->rank() == 0) {
    EXPECT_EQ(again.reaches.size(), plan.size());
  }
}

TEST(RanksRouting, PartitionKeepsSmallBasinsWholeAndBalancesWork) {
  // Ten basins of 100 reaches, 2 ranks, target 1000 / 8 = 125 reaches per
  // part: every basin stays whole, five on each rank.
  const network::NetworkPlan plan = syntheticPlan(1000, 10, 3);
  std::map<std::uint32_t, std::size_t> basin_size;
  for (std::uint32_t i = 0; i < plan.size(); ++i) ++basin_size[plan.basin[i]];
  const std::size_t largest =
      std::max_element(basin_size.begin(), basin_size.end(), [](auto& a, auto& b) { return a.second < b.second; })
          ->second;
  const network::Partition p = network::partitionPlan(plan, 2);
  std::map<std::uint32_t, std::set<std::uint32_t>> parts_of_basin;
  for (std::uint32_t i = 0; i < plan.size(); ++i) parts_of_basin[plan.basin[i]].insert(p.part[i]);
  for (const auto& [basin, parts] : parts_of_basin)
    if (basin_size[basin] <= 125) {
      EXPECT_EQ(parts.size(), 1u) << "basin " << basin << " was cut";
    }
  // Longest-processing-time-first: no rank above the mean by more than the
  // largest part (Graham 1969), and every link inside a part stays on a rank.
  const double largest_part = *std::max_element(p.part_work.begin(), p.part_work.end());
  EXPECT_LE(std::max(p.rank_work[0], p.rank_work[1]), 500.0 + largest_part);
  EXPECT_LE(largest_part, static_cast<double>(std::max<std::size_t>(largest, 125)));
  EXPECT_EQ(p.rank_work[0] + p.rank_work[1], 1000.0);
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    for (std::uint32_t k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k)
      if (p.part[i] == p.part[plan.down_reach[k]]) {
        EXPECT_EQ(p.owner[i], p.owner[plan.down_reach[k]]);
      }
}

int main(int argc, char** argv) {
  parallel::MpiRanks ranks(&argc, &argv);
  g_ranks = &ranks;
  ::testing::InitGoogleTest(&argc, argv);
  return RUN_ALL_TESTS();
}
