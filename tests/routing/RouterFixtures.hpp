#pragma once
// Test helpers shared by the network-router tests: a smooth storm
// hydrograph, an hourly time axis, and a sink that keeps the outflows.

#include <cmath>
#include <cstdint>
#include <map>
#include <numbers>
#include <span>
#include <vector>

#include "reachwise/routing/NetworkRouter.hpp"

namespace routertest {

/// `base`, plus a sin² bump of height `peak` from hour `start_h` lasting `len_h` hours.
inline std::vector<double> storm(std::size_t steps, double base, double peak, double start_h, double len_h) {
  std::vector<double> q(steps, base);
  for (std::size_t n = 0; n < steps; ++n) {
    const double t = double(n) - start_h;
    if (t > 0 && t < len_h) q[n] += peak * std::pow(std::sin(std::numbers::pi * t / len_h), 2);
  }
  return q;
}

/// Keeps every outflow series it is given, by reach.
struct Capture : reachwise::routing::SeriesSink {
  std::map<std::uint32_t, std::vector<double>> q;
  void write(std::uint32_t reach, std::span<const double> qs, std::span<const double>,
             std::span<const double>) override {
    q[reach].assign(qs.begin(), qs.end());
  }
};

/// `steps` hourly samples from 2026-05-01T00:00:00Z.
inline reachwise::routing::TimeAxis hourly(std::size_t steps) {
  reachwise::routing::TimeAxis a;
  a.start_unix_s = 1777593600;  // 2026-05-01T00:00:00Z
  a.dt_s = 3600;
  a.steps = steps;
  return a;
}

}  // namespace routertest
