// Cell updates per second of the single-reach routing kernels.
// One cell update = one sub-reach advanced by one sub-step.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <optional>
#include <vector>

#include "reachwise/routing/ReachRouter.hpp"

using namespace reachwise;
using namespace reachwise::routing;

namespace {

std::vector<double> storm(std::size_t n, double dt) {
  std::vector<double> q(n, 15.0);
  for (std::size_t i = 0; i < n; ++i) {
    const double t = i * dt, d = 36 * 3600.0;
    if (t < d) q[i] += 400 * std::pow(std::sin(std::numbers::pi * t / d), 2);
  }
  return q;
}

/// Routes the benchmark reach (200 km, a 36 h storm over 30 days hourly)
/// with `opt`, counting cell updates.
void routeBenchmarkReach(benchmark::State& state, const RouteOptions& opt) {
  const double dt = 3600;
  const std::vector<double> in = storm(720, dt);  // 30 days hourly
  const ReachSpec reach{hydraulics::Section::trapezoid(25, 2, 0.035, 0.0008), 200000, 12 * 3600.0, 0.2};
  ReachRouter router;
  std::vector<double> out;
  std::uint64_t cells = 0;
  for (auto _ : state) {
    const ReachRun r = router.route(reach, in, {}, dt, opt, out);
    benchmark::DoNotOptimize(out.data());
    cells += std::uint64_t(r.numerics.subreaches) * r.numerics.substeps * (in.size() - 1);
    state.counters["subreaches"] = r.numerics.subreaches;
    state.counters["substeps"] = r.numerics.substeps;
  }
  state.counters["cell_updates_per_s"] =
      benchmark::Counter(static_cast<double>(cells), benchmark::Counter::kIsRate);
}

void routeKernel(benchmark::State& state, Method method, Scheme scheme, bool table) {
  RouteOptions opt;
  opt.method = method;
  opt.scheme = scheme;
  opt.use_rating_table = table;
  routeBenchmarkReach(state, opt);
}

// Building the benchmark reach's rating table (Q_hi = 1.5 × the 415 m³/s
// peak, as the router chooses): part of every vpmc figure above.
void ratingTableBuild(benchmark::State& state) {
  const hydraulics::Section section = hydraulics::Section::trapezoid(25, 2, 0.035, 0.0008);
  const double q_hi = 1.5 * 415.0;
  for (auto _ : state) {
    const hydraulics::RatingTable table(section, q_hi * 1e-5, q_hi);
    benchmark::DoNotOptimize(&table);
  }
}

// A network's worth of short reaches: 2 km each, trapezoids of width
// 5–40 m, side slope 1–3, slope 0.001–0.01, n = 0.035, 720 hourly steps, a
// storm (scaled with the reach's size) over base flow. One router is reused
// across reaches as a network run's worker thread does, so the figure
// includes each reach's fixed cost: checks, peak, grid, rating table.
constexpr std::size_t kShortReaches = 256;

struct ShortReach {
  ReachSpec spec;
  std::vector<double> inflow;
};

std::vector<ShortReach> shortReaches(double dt) {
  std::vector<ShortReach> r;
  r.reserve(kShortReaches);
  for (std::size_t i = 0; i < kShortReaches; ++i) {
    // Deterministic spread over the ranges (golden-ratio sequence).
    const double u = std::fmod(0.6180339887498949 * static_cast<double>(i + 1), 1.0);
    const double v = std::fmod(0.7548776662466927 * static_cast<double>(i + 1), 1.0);
    const double w = std::fmod(0.5698402909980532 * static_cast<double>(i + 1), 1.0);
    const double width = 5.0 + 35.0 * u, slope = 0.001 * std::pow(10.0, v);
    const double scale = width / 25.0;  // bigger channel, bigger flood
    std::vector<double> in(720);
    const double base = 2.0 * scale, peak = 80.0 * scale, d = (12.0 + 36.0 * w) * 3600.0;
    for (std::size_t n = 0; n < in.size(); ++n) {
      const double t = static_cast<double>(n) * dt - 24 * 3600.0;
      in[n] = base + (t > 0 && t < d ? peak * std::pow(std::sin(std::numbers::pi * t / d), 2) : 0.0);
    }
    r.push_back(ShortReach{ReachSpec{hydraulics::Section::trapezoid(width, 1.0 + 2.0 * w, 0.035, slope),
                                     2000.0, 1800.0, 0.2},
                           std::move(in)});
  }
  return r;
}

void routeShortReaches(benchmark::State& state, Method method) {
  const double dt = 3600;
  const std::vector<ShortReach> reaches = shortReaches(dt);
  RouteOptions opt;
  opt.method = method;
  ReachRouter router;
  std::vector<double> out;
  std::uint64_t cells = 0, routed = 0, subreaches = 0, substeps = 0;
  for (auto _ : state) {
    for (const ShortReach& r : reaches) {
      const ReachRun run = router.route(r.spec, r.inflow, {}, dt, opt, out);
      benchmark::DoNotOptimize(out.data());
      cells += std::uint64_t(run.numerics.subreaches) * run.numerics.substeps * (r.inflow.size() - 1);
      subreaches += run.numerics.subreaches;
      substeps += run.numerics.substeps;
    }
    routed += reaches.size();
  }
  state.counters["mean_subreaches"] = static_cast<double>(subreaches) / static_cast<double>(routed);
  state.counters["mean_substeps"] = static_cast<double>(substeps) / static_cast<double>(routed);
  state.counters["cell_updates_per_s"] =
      benchmark::Counter(static_cast<double>(cells), benchmark::Counter::kIsRate);
  state.counters["cells_per_reach"] = static_cast<double>(cells) / static_cast<double>(routed);
  state.counters["us_per_reach"] = benchmark::Counter(static_cast<double>(routed) * 1e-6,
                                                      benchmark::Counter::kIsRate |
                                                          benchmark::Counter::kInvert);
}

// The rating tables alone of the short reaches, over the range and with
// the nodes ReachRouter picks (Q_hi = 1.5 × peak; Q_lo = max(1e-5 Q_hi, a
// tenth of the smallest inflow); 64 nodes per five decades, at least 16),
// rebuilt in one table's storage as the router does: the table's share of
// us_per_reach. `five_decades` builds the fixed 1e-5 Q_hi .. Q_hi, 64-node
// table the router used before.
void shortReachTables(benchmark::State& state, bool five_decades) {
  const std::vector<ShortReach> reaches = shortReaches(3600);
  std::uint64_t built = 0;
  std::optional<hydraulics::RatingTable> table;
  for (auto _ : state) {
    for (const ShortReach& r : reaches) {
      const auto [lo, hi] = std::minmax_element(r.inflow.begin(), r.inflow.end());
      const double q_hi = 1.5 * *hi;
      const double q_lo = five_decades ? q_hi * 1e-5 : std::max(q_hi * 1e-5, 0.1 * *lo);
      const auto nodes = five_decades ? std::size_t{64}
                                      : std::clamp<std::size_t>(static_cast<std::size_t>(std::ceil(
                                                                    64 * std::log10(q_hi / q_lo) / 5.0 - 1e-9)),
                                                                16, 64);
      if (table) table->rebuild(r.spec.section, q_lo, q_hi, nodes);
      else table.emplace(r.spec.section, q_lo, q_hi, nodes);
      benchmark::DoNotOptimize(&*table);
    }
    built += reaches.size();
  }
  state.counters["us_per_table"] = benchmark::Counter(static_cast<double>(built) * 1e-6,
                                                      benchmark::Counter::kIsRate |
                                                          benchmark::Counter::kInvert);
}

// The conservative `vpmc` cell on a forced grid of m sub-reaches and
// 64 / m sub-steps (the same cell updates per route), on the benchmark
// reach: along diagonals a pass holds at most m independent cells, so this
// shows what a cell costs with one, two, ... dependency chains to overlap.
void vpmcGridShape(benchmark::State& state) {
  RouteOptions opt;
  opt.subreaches = static_cast<std::uint32_t>(state.range(0));
  opt.substeps = 64 / opt.subreaches;
  routeBenchmarkReach(state, opt);
}

}  // namespace

BENCHMARK_CAPTURE(routeKernel, constant_parameter, Method::ConstantParameter, Scheme::ThreePoint, true)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeKernel, muskingum_given_k_x, Method::Muskingum, Scheme::ThreePoint, true)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeKernel, vpmc_three_point_table, Method::VariableParameter, Scheme::ThreePoint, true)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeKernel, vpmc_four_point_table, Method::VariableParameter, Scheme::FourPoint, true)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeKernel, vpmc_three_point_direct_solve, Method::VariableParameter, Scheme::ThreePoint, false)
    ->Unit(benchmark::kMillisecond);
// The implicit diffusion-wave solver; its cell count is the reach's cells
// (the buffer past the reach, solved too, is not counted).
BENCHMARK_CAPTURE(routeKernel, diffusion, Method::DiffusionWave, Scheme::ThreePoint, true)
    ->Unit(benchmark::kMillisecond);

BENCHMARK(ratingTableBuild)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(routeShortReaches, vpmc_2km_reaches, Method::VariableParameter)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeShortReaches, mc_2km_reaches, Method::ConstantParameter)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeShortReaches, muskingum_2km_reaches, Method::Muskingum)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(routeShortReaches, diffusion_2km_reaches, Method::DiffusionWave)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(shortReachTables, router_range, false)->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(shortReachTables, five_decades, true)->Unit(benchmark::kMillisecond);

BENCHMARK(vpmcGridShape)->Arg(1)->Arg(2)->Arg(4)->Arg(8)->Arg(16)->Arg(32)->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
