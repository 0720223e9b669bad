// Cell updates per second of the single-reach routing kernels.
// One cell update = one sub-reach advanced by one sub-step.
#include <benchmark/benchmark.h>

#include <cmath>
#include <numbers>
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

void routeKernel(benchmark::State& state, Method method, Scheme scheme, bool table) {
  const double dt = 3600;
  const std::vector<double> in = storm(720, dt);  // 30 days hourly
  const ReachSpec reach{hydraulics::Section::trapezoid(25, 2, 0.035, 0.0008), 200000, 12 * 3600.0, 0.2};
  RouteOptions opt;
  opt.method = method;
  opt.scheme = scheme;
  opt.use_rating_table = table;
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

BENCHMARK(ratingTableBuild)->Unit(benchmark::kMicrosecond);

BENCHMARK_MAIN();
