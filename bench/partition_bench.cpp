// The partitioner alone at cluster sizes (not part of CI): a synthetic
// network of N reaches (`reachwise synth`'s generator, topology only), cut
// for each rank count by network::partitionPlan, and what the cut costs:
//   - work balance: the most reaches on one rank over the mean;
//   - cut links and messages (one per cut reach and receiving rank), and
//     the bytes they carry: messages x steps x 8;
//   - a list-scheduling simulation of the run: every reach costs one unit
//     on its rank (one worker per rank), a message arrives `latency` units
//     after its reach is done, each rank routes its ready reaches in the
//     order they became ready. Makespan over the ideal (total / ranks) is
//     the time lost to dependencies and waiting; the critical path (the
//     longest chain of reaches) bounds any run from below.
//
// Usage: partition_bench REACHES OUTLETS STEPS LATENCY RANKS...
//   e.g. partition_bench 30000000 3000 720 0.1 64 1024
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <numeric>
#include <queue>
#include <string>
#include <vector>

#include "reachwise/network/Partition.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"

using namespace reachwise;

namespace {

double seconds(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

/// The links of the synthetic network as a plan in topological order
/// (upstream first; Kahn's algorithm); ids left empty.
network::NetworkPlan topologyPlan(const network::SyntheticNetwork& net) {
  const std::size_t n = net.size();
  std::vector<std::uint32_t> ups(n, 0);
  for (std::size_t i = 0; i < n; ++i)
    if (net.downstream[i] != network::kSyntheticOutlet) ++ups[net.downstream[i]];
  std::vector<std::uint32_t> order, pending = ups;
  order.reserve(n);
  for (std::uint32_t i = 0; i < n; ++i)
    if (ups[i] == 0) order.push_back(i);
  for (std::size_t k = 0; k < order.size(); ++k) {
    const std::uint32_t d = net.downstream[order[k]];
    if (d != network::kSyntheticOutlet && --pending[d] == 0) order.push_back(d);
  }
  std::vector<std::uint32_t> at(n);
  for (std::uint32_t k = 0; k < n; ++k) at[order[k]] = k;
  network::NetworkPlan plan;
  plan.reach_id.resize(n);
  plan.up_offset.assign(n + 1, 0);
  plan.down_offset.assign(n + 1, 0);
  for (std::uint32_t k = 0; k < n; ++k) {
    const std::uint32_t d = net.downstream[order[k]];
    plan.down_offset[k + 1] = plan.down_offset[k] + (d != network::kSyntheticOutlet ? 1 : 0);
    if (d != network::kSyntheticOutlet) {
      plan.down_reach.push_back(at[d]);
      ++plan.up_offset[at[d] + 1];
    }
  }
  for (std::size_t k = 0; k < n; ++k) plan.up_offset[k + 1] += plan.up_offset[k];
  plan.up_reach.resize(plan.up_offset[n]);
  plan.up_fraction.assign(plan.up_offset[n], 1.0);
  std::vector<std::uint32_t> fill(plan.up_offset.begin(), plan.up_offset.end() - 1);
  for (std::uint32_t k = 0; k < n; ++k)
    for (std::uint32_t j = plan.down_offset[k]; j < plan.down_offset[k + 1]; ++j)
      plan.up_reach[fill[plan.down_reach[j]]++] = k;
  return plan;
}

struct Schedule {
  double makespan = 0, critical_path = 0;
};

/// List scheduling of unit-cost reaches on their owners (see the top).
Schedule simulate(const network::NetworkPlan& plan, const std::vector<int>& owner, int ranks, double latency) {
  const std::size_t n = plan.size();
  std::vector<double> ready(n, 0), finish(n, 0), chain(n, 0);
  std::vector<std::uint32_t> pending(n);
  using Item = std::pair<double, std::uint32_t>;  // (ready time, reach)
  std::priority_queue<Item, std::vector<Item>, std::greater<>> queue;
  for (std::uint32_t i = 0; i < n; ++i) {
    pending[i] = plan.up_offset[i + 1] - plan.up_offset[i];
    if (pending[i] == 0) queue.push({0.0, i});
  }
  std::vector<double> free_at(static_cast<std::size_t>(ranks), 0.0);
  Schedule s;
  while (!queue.empty()) {
    const auto [t, i] = queue.top();
    queue.pop();
    double& rank_free = free_at[static_cast<std::size_t>(owner[i])];
    finish[i] = std::max(t, rank_free) + 1.0;
    rank_free = finish[i];
    s.makespan = std::max(s.makespan, finish[i]);
    double longest = 0;
    for (std::uint32_t k = plan.up_offset[i]; k < plan.up_offset[i + 1]; ++k) longest = std::max(longest, chain[plan.up_reach[k]]);
    chain[i] = longest + 1;
    s.critical_path = std::max(s.critical_path, chain[i]);
    for (std::uint32_t k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k) {
      const std::uint32_t d = plan.down_reach[k];
      ready[d] = std::max(ready[d], finish[i] + (owner[d] == owner[i] ? 0.0 : latency));
      if (--pending[d] == 0) queue.push({ready[d], d});
    }
  }
  return s;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 6) {
    std::fprintf(stderr, "usage: %s REACHES OUTLETS STEPS LATENCY RANKS...\n", argv[0]);
    return 2;
  }
  const std::size_t reaches = std::strtoull(argv[1], nullptr, 10), outlets = std::strtoull(argv[2], nullptr, 10);
  const double steps = std::strtod(argv[3], nullptr), latency = std::strtod(argv[4], nullptr);
  auto t0 = std::chrono::steady_clock::now();
  network::NetworkPlan plan;
  {
    const network::SyntheticNetwork net = network::generateSyntheticNetwork({reaches, outlets, 1});
    std::printf("network: %zu reaches, %zu outlets, generated in %.1f s\n", net.size(), outlets, seconds(t0));
    t0 = std::chrono::steady_clock::now();
    plan = topologyPlan(net);
  }
  std::printf("plan (topology only) in %.1f s\n\n", seconds(t0));
  std::printf("| ranks | parts | partition s | work max/mean | cut links | messages | bytes sent (MB) | "
              "most MB into one rank | simulated makespan / ideal | critical path / ideal |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|\n");
  for (int a = 5; a < argc; ++a) {
    const int ranks = std::atoi(argv[a]);
    t0 = std::chrono::steady_clock::now();
    const network::Partition p = network::partitionPlan(plan, ranks);
    const double partition_s = seconds(t0);
    std::vector<double> into(static_cast<std::size_t>(ranks), 0);
    std::vector<int> told;
    for (std::uint32_t u = 0; u < plan.size(); ++u) {
      told.clear();
      for (std::uint32_t k = plan.down_offset[u]; k < plan.down_offset[u + 1]; ++k) {
        const int to = p.owner[plan.down_reach[k]];
        if (to != p.owner[u] && std::find(told.begin(), told.end(), to) == told.end()) told.push_back(to);
      }
      for (const int to : told) into[static_cast<std::size_t>(to)] += steps * 8;
    }
    const Schedule s = simulate(plan, p.owner, ranks, latency);
    const double ideal = static_cast<double>(plan.size()) / ranks;
    std::printf("| %d | %zu | %.2f | %.4f | %zu | %zu | %.1f | %.2f | %.4f | %.4f |\n", ranks, p.part_work.size(),
                partition_s, p.imbalance(), p.cut_links, p.messages,
                static_cast<double>(p.messages) * steps * 8 / 1e6,
                *std::max_element(into.begin(), into.end()) / 1e6, s.makespan / ideal, s.critical_path / ideal);
    std::fflush(stdout);
  }
  return 0;
}
