// Attaching lakes to a large network (network::linkLakes) with its grid
// index, beside the former scan of every lake for every reach end, timed
// on a sample of reaches and scaled up (the scan costs the same per end).
// Not a Google Benchmark fixture: one run of each on a network built in
// memory by the synthetic generator (`reachwise synth`), no I/O.
//
//   lakes_link_bench [REACHES [LAKES [SAMPLE]]]    defaults 1000000 10000 20000
#include <fmt/core.h>

#include <chrono>
#include <cstdlib>
#include <string>
#include <vector>

#include "reachwise/network/Lakes.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/SyntheticNetwork.hpp"

namespace {

using Clock = std::chrono::steady_clock;
using namespace reachwise::network;

double secondsSince(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

/// The lakes an end lies on, testing every lake (what linkLakes did before
/// the index).
std::size_t scan(const LakeTable& lakes, Point2 p, double tolerance) {
  std::size_t hits = 0;
  for (const auto& lake : lakes.lakes)
    if (insideRings(lake.rings, p) || distanceToRings(lake.rings, p) <= tolerance) ++hits;
  return hits;
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 1000000;
  const std::size_t count = argc > 2 ? std::strtoull(argv[2], nullptr, 10) : 10000;
  const std::size_t sample = argc > 3 ? std::strtoull(argv[3], nullptr, 10) : 20000;
  auto t0 = Clock::now();
  SyntheticOptions o;
  o.reaches = n;
  const SyntheticNetwork net = generateSyntheticNetwork(o);
  const auto made = syntheticLakes(net, count, o.seed);
  LakeTable lakes;
  for (std::size_t k = 0; k < made.size(); ++k) {
    LakeRecord lake;
    lake.lake_id = SyntheticLake::id(k);
    lake.rings.push_back(made[k].ring);
    lakes.lakes.push_back(std::move(lake));
  }
  const ReachTable table = toReachTable(net);
  const ReachGraph graph(table);
  const NetworkPlan plan = graph.freeze();
  fmt::print("network        {} reaches, {} lakes, built in {:.2f} s\n", plan.size(), lakes.lakes.size(),
             secondsSince(t0));
  const double tolerance = 5.0;  // the default snap tolerance, m
  t0 = Clock::now();
  ProblemList problems;
  const auto links = linkLakes(plan, lakes, tolerance, problems);
  const double indexed = secondsSince(t0);
  std::size_t attached = 0;
  for (const auto& l : links) attached += l.inflow.size() + l.outflow.size() + l.inside.size();
  fmt::print("linkLakes      {:.3f} s ({} reach ends attached, {} problems)\n", indexed, attached, problems.size());
  // The scan on the first `sample` reaches (both ends), scaled to all.
  const std::size_t m = std::min(sample, plan.size());
  t0 = Clock::now();
  std::size_t hits = 0;
  for (std::size_t i = 0; i < m; ++i) hits += scan(lakes, plan.top[i], tolerance) + scan(lakes, plan.bottom[i], tolerance);
  const double scanned = secondsSince(t0);
  fmt::print("scan           {:.3f} s for {} reaches ({} ends on lakes): {:.0f} s for all {} reaches\n", scanned, m,
             hits, scanned * static_cast<double>(plan.size()) / static_cast<double>(m), plan.size());
  return 0;
}
