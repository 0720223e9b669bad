#include "reachwise/routing/Muskingum.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/Error.hpp"

namespace reachwise::routing {

namespace {
bool positive(double v) { return v > 0 && std::isfinite(v); }
}  // namespace

Coefficients muskingumCoefficients(double k_s, double x, double dt_s) {
  REACHWISE_ASSERT(positive(k_s) && positive(dt_s) && x >= 0 && x <= 0.5);
  // Chow, Maidment & Mays (1988), Applied Hydrology, eq. 8.4.7.
  const double den = k_s * (1.0 - x) + 0.5 * dt_s;
  return Coefficients{(0.5 * dt_s - k_s * x) / den, (0.5 * dt_s + k_s * x) / den,
                      (k_s * (1.0 - x) - 0.5 * dt_s) / den, dt_s / den};
}

CungeParameters cungeParameters(double c, double t, double slope, double q, double dx, double dt) {
  REACHWISE_ASSERT(positive(c) && positive(t) && positive(slope) && positive(dx) && positive(dt));
  REACHWISE_ASSERT(q >= 0 && std::isfinite(q));
  CungeParameters p;
  p.k_s = dx / c;
  p.courant = c * dt / dx;
  p.cell_reynolds = cellDiffusionRatio(q, t, slope, c, dx);
  // X may go below 0 (D > 1): the coefficients stay non-negative while
  // D <= 1 + C, so only beyond that is D lowered (X raised to −C/2).
  if (p.cell_reynolds > 1.0 + p.courant) {
    p.cell_reynolds = 1.0 + p.courant;
    p.x_clamped = true;
  }
  p.x = 0.5 * (1.0 - p.cell_reynolds);
  p.coefficients = cungeCoefficients(p.courant, p.cell_reynolds);
  return p;
}

Grid chooseCungeGrid(double length, double c, double t, double slope, double q, double dt,
                     const GridLimits& limits, double in_new_floor) {
  REACHWISE_ASSERT(positive(length) && positive(c) && positive(t) && positive(slope) && positive(dt));
  REACHWISE_ASSERT(q >= 0 && std::isfinite(q) && in_new_floor <= 0 && in_new_floor > -1);
  const double ell = diffusionLength(q, t, slope, c);  // Δx at which D = 1
  Grid g;
  if (c * dt < ell) {
    // Diffusion dominates: the wave moves less than ℓ in a step (and
    // sub-steps would only slow it further), so k = 1 and the sub-reach is
    // chosen for accuracy. The scheme's phase error is
    // C (C² + 3D² − 1) (kΔx)³ / 12 per step (docs/methods.md §4), zero at
    // Δx* = (3ℓ² + (cΔt)²)^(1/2); Δx is kept at most Δx_max, where in_new =
    // (cΔt + ℓ − Δx)/(Δx + cΔt + ℓ) reaches `in_new_floor`, and D is
    // lowered to 1 + C only where even one sub-reach is shorter than ℓ − cΔt.
    const double ct = c * dt, tau = -in_new_floor;
    const double dx_best = std::sqrt(3.0 * ell * ell + ct * ct), dx_max = (ell + ct) * (1 + tau) / (1 - tau);
    const double m = std::max({1.0, std::round(length / dx_best), std::ceil(length / dx_max * (1 - 1e-12))});
    g.subreaches = static_cast<std::uint32_t>(std::min(m, double(limits.max_subreaches)));
    g.x_clamped = length / g.subreaches < (ell - ct) * (1 - 1e-12);
    g.compromise = length / g.subreaches > dx_max * (1 + 1e-12);
    return g;
  }
  for (std::uint32_t k = 1; k <= limits.max_substeps; ++k) {
    const double ct = c * dt / k;  // distance the wave travels in one sub-step
    const double lo = std::abs(ell - ct), hi = ell + ct;
    const double m_lo = std::max(1.0, std::ceil(length / hi * (1 - 1e-12)));
    const double m_hi = std::min(double(limits.max_subreaches), std::floor(length / lo * (1 + 1e-12)));
    if (m_lo <= m_hi) {
      g.substeps = k;
      g.subreaches = static_cast<std::uint32_t>(std::clamp(std::round(length / ct), m_lo, m_hi));  // C ≈ 1
      return g;
    }
    if (ct < ell) break;  // from here on the band only narrows
  }
  // No Δx = L/m lies in the band at any sub-step (a reach much shorter than
  // the wave moves in a step, or the limits): sub-reaches of about ℓ and
  // the longest sub-step with out_old >= 0 (C <= 1 + D); D is lowered to
  // 1 + C where it exceeds it.
  const double m = std::min(double(limits.max_subreaches), std::ceil(length / ell));
  const double dx = length / m, d = ell / dx;
  const double k = std::clamp(std::ceil(c * dt / (dx * (1 + d)) * (1 - 1e-12)), 1.0, double(limits.max_substeps));
  g.subreaches = static_cast<std::uint32_t>(m);
  g.substeps = static_cast<std::uint32_t>(k);
  g.x_clamped = d > 1 + c * dt / k / dx;
  g.compromise = c * dt / k > dx * (1 + d) * (1 + 1e-12);
  return g;
}

Grid chooseMuskingumGrid(double k_s, double x, double dt, const GridLimits& limits) {
  REACHWISE_ASSERT(positive(k_s) && positive(dt) && x >= 0 && x <= 0.5);
  // r = Δt_sub / (2 K_sub) = Δt m / (2 K k) must lie in [X, 1 − X].
  Grid best;
  double best_score = std::numeric_limits<double>::infinity();
  for (std::uint32_t k = 1; k <= limits.max_substeps; ++k) {
    for (std::uint32_t m = 1; m <= limits.max_subreaches; ++m) {
      const double r = dt * m / (2.0 * k_s * k);
      if (r >= x * (1 - 1e-12) && r <= (1.0 - x) * (1 + 1e-12)) {
        Grid g;
        g.subreaches = m;
        g.substeps = k;
        return g;
      }
      const double score = r < x ? x - r : r - (1.0 - x);
      if (score < best_score) {
        best_score = score;
        best.subreaches = m;
        best.substeps = k;
      }
      if (r > 1.0 - x) break;  // larger m only moves r further up
    }
  }
  best.compromise = true;
  return best;
}

ConvergenceRatios ponceConvergenceRatios(double courant, double x, double sigma_dx) {
  // Ponce (1989), Engineering Hydrology, §9.4 (Ponce & Theurer 1982).
  const double p = std::cos(sigma_dx), s = std::sin(sigma_dx);
  const double r = x + courant / 2.0, sv = r - courant;
  const double m = (1.0 - p) * (1.0 - 2.0 * sv) * courant;
  const double n = s * courant;
  const double pp = 1.0 - 2.0 * (1.0 - p) * (1.0 - sv) * sv;
  ConvergenceRatios out;
  out.amplitude = std::sqrt((pp - m) * (pp - m) + n * n) / pp;
  out.phase = std::atan2(n, pp - m) / (courant * sigma_dx);
  return out;
}

}  // namespace reachwise::routing
