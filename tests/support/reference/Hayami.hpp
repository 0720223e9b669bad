#pragma once
/// \file
/// Test support: the exact solution of the linear diffusion wave (Hayami 1951)
/// for a semi-infinite uniform channel fed at x = 0, to check routing
/// results and the reference solvers against.

#include <cmath>
#include <cstddef>
#include <numbers>
#include <vector>

namespace testsupport::reference {

/// Hayami (1951) linear diffusion-wave solution at distance x for
///   dQ/dt + c dQ/dx = nu d2Q/dx2,  Q(0, t) = inflow(t),  Q(x, 0) = base,
/// by direct numerical quadrature of the convolution with the kernel
///   h(x,t) = x / (2 sqrt(pi nu t^3)) exp(-(x - c t)^2 / (4 nu t)),
/// midpoint rule on a 10 s grid, inflow interpolated linearly between its
/// samples (every dt). Independent of the router: only the closed-form
/// kernel and the inflow are used. For a channel at reference flow Q,
/// c = dQ/dA and nu = Q / (2 T S0) (Hayami 1951; Ponce 1989, *Engineering
/// Hydrology* ch. 9).
inline std::vector<double> hayami(const std::vector<double>& inflow, double base, double dt, double x,
                                  double c, double nu) {
  const double h = 10.0;
  auto kernel = [&](double t) {
    if (t <= 0) return 0.0;
    return x / (2.0 * std::sqrt(std::numbers::pi * nu * t * t * t)) *
           std::exp(-(x - c * t) * (x - c * t) / (4.0 * nu * t));
  };
  auto in = [&](double t) {
    const double u = t / dt;
    const auto i = static_cast<std::size_t>(u);
    if (i + 1 >= inflow.size()) return inflow.back();
    return inflow[i] + (inflow[i + 1] - inflow[i]) * (u - i);
  };
  std::vector<double> out(inflow.size(), base);
  for (std::size_t n = 1; n < inflow.size(); ++n) {
    const double t = n * dt;
    double sum = 0;
    for (double tau = 0.5 * h; tau < t; tau += h) sum += (in(tau) - base) * kernel(t - tau) * h;
    out[n] = base + sum;
  }
  return out;
}

}  // namespace testsupport::reference
