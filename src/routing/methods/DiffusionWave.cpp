// `diffusion`: the diffusion wave (zero-inertia) equations solved directly,
// implicit and conservative, for reaches where the Muskingum–Cunge methods
// cannot represent the channel's diffusion (flat reaches, short floods:
// docs/methods.md, "Where the diffusion wave fails", and §6).
//
//   continuity  dA/dt + dQ/dx = q_L                      (Saint-Venant 1871)
//   momentum    Q = K(y) sgn(S) |S|^(1/2), S = S0 − dy/dx  (the momentum
//               equation without its inertia terms: Hayami 1951; Ponce 1989,
//               *Engineering Hydrology* ch. 9), K the Manning conveyance.
//
// Finite volumes on depth: the reach in N equal cells and, past its end, a
// buffer of cells growing downstream that ends in normal flow, so the flow
// at x = L is that of the channel continuing, not of a boundary condition
// placed at L. The face flux takes the mean of the two cells' conveyances
// and the water-surface slope between their centres (cells no longer than
// the diffusion length keep it free of oscillations; an upwind conveyance
// measured 4–10 % low in peak on the accuracy matrix). θ-weighted in time
// (θ = 0.55: slightly implicit, damping the shortest waves), Newton's method
// on the tridiagonal system each sub-step (Thomas algorithm), each depth
// change held to half the depth where Newton overshoots. The storage of
// each cell changes by exactly the θ-weighted fluxes through its faces, so
// the reach's volume balances to the Newton tolerance.

#include <algorithm>
#include <cstdio>
#include <cmath>
#include <cstddef>
#include <limits>
#include <string>
#include <vector>

#include "Methods.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/ConveyanceTable.hpp"
#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::routing::methods {

namespace {

constexpr double kTheta = 0.55;  // see the file comment
/// Newton stops once no depth moves by more than this (m): convergence is
/// quadratic, so the residual left is of the order of its square.
constexpr double kDepthTolerance = 1e-6;
constexpr int kMaxNewton = 30;
/// The buffer past x = L: kBufferLengths diffusion lengths at the largest
/// flow (what happens downstream reaches back about one ℓ), cells growing by
/// kBufferGrowth; sub-steps keep the Courant number at the fastest
/// celerity at most kCourant (the θ scheme is unconditionally stable). Chosen
/// on the accuracy matrix and the 100k-reach synthetic run (docs/methods.md
/// §6): every choice below met every target on the matrix; the run took
/// 45.7 s with 8 ℓ, 1.2 and 2, 24.7 s with 5 ℓ, 1.5 and 4, 20.4 s with
/// these (19.4 s with no reach handed over), whose worst matrix row is
/// 0.65 % in peak and 3.4 % of the travel time from the diffusion-wave
/// reference (0.56 % and 1.9 % with 5 ℓ, 1.5 and 4).
constexpr double kBufferLengths = 4, kBufferGrowth = 2, kCourant = 8;

/// The grid: cells over the reach and the buffer past it, sub-steps.
struct DiffusionGrid {
  std::vector<double> dx;  // cell lengths, reach cells first
  std::size_t reach_cells = 0;
  std::uint32_t substeps = 1;
};

/// Δx no longer than the shortest diffusion length over the event's flows
/// (cell Péclet number at most 2, so the central face flux does not
/// oscillate), nor than a sixteenth of the distance the wave moves in its
/// rise, nor than a quarter of the reach; sub-steps as kCourant says; the
/// buffer as kBufferLengths and kBufferGrowth say, its cells at most twice
/// the shortest diffusion length.
DiffusionGrid chooseGrid(const hydraulics::Section& sec, double length, double q_lo, double q_hi, double rise_s,
                         double dt, const GridLimits& limits) {
  double ell_min = 1e300, ell_max = 0, c_max = 0;
  for (int i = 0; i <= 16; ++i) {
    const double q = q_lo + (q_hi - q_lo) * i / 16;
    const hydraulics::FlowState f = sec.normalFlow(std::max(q, 1e-9));
    const double ell = diffusionLength(std::max(q, 1e-9), f.top_width_m, sec.bedSlope(), f.celerity_ms);
    ell_min = std::min(ell_min, ell), ell_max = std::max(ell_max, ell), c_max = std::max(c_max, f.celerity_ms);
  }
  double dx = std::min({ell_min, length / 4, c_max * std::max(rise_s, dt) / 16});
  const double n = std::clamp(std::ceil(length / dx), 1.0, double(limits.max_subreaches));
  dx = length / n;
  DiffusionGrid g;
  g.reach_cells = static_cast<std::size_t>(n);
  g.dx.assign(g.reach_cells, dx);
  const double buffer = std::max(kBufferLengths * ell_max, 0.5 * length);
  double covered = 0, cell = dx;
  while (covered < buffer) {
    cell = std::min(cell * kBufferGrowth, std::max(dx, 2 * ell_min));
    g.dx.push_back(cell);
    covered += cell;
  }
  g.substeps = static_cast<std::uint32_t>(
      std::clamp(std::ceil(c_max * dt / (kCourant * dx)), 1.0, double(limits.max_substeps)));
  return g;
}

/// The state of the cells and their conveyances.
struct Channel {
  const hydraulics::ConveyanceTable& table;  // Q_normal(y) of the section
  double slope, sqrt_slope, inv_sqrt_slope;
  /// Conveyance K = Q_normal / S0^(1/2) and dK/dy at depth y (the solver's
  /// inner loop: a product, not a division).
  void conveyance(double y, double& k, double& dk) const {
    double q, dq;
    table.dischargeAndDerivative(y, q, dq);
    k = q * inv_sqrt_slope, dk = dq * inv_sqrt_slope;
  }
};

/// Face flux between cells of depths y_up (upstream) and y_dn, centres
/// `dist` apart (given as 1/dist), with their conveyances k and dk/dy, and
/// its derivatives in the two depths. The water-surface slope is
/// S0 − (y_dn − y_up)/dist, the conveyance the mean of the two cells'.
/// |S|^(1/2) has an infinite derivative at S = 0: regularised below
/// s_eps = 1e-3 S0, where the flux is a negligible fraction of the
/// channel's (`SlopeRoot` holds s_eps and 1/s_eps^(1/2)).
struct Flux {
  double q, d_up, d_dn;
};
struct SlopeRoot {
  double s_eps, inv_root_eps;
  explicit SlopeRoot(double slope) : s_eps(1e-3 * slope), inv_root_eps(1.0 / std::sqrt(s_eps)) {}
};
Flux faceFlux(double slope, const SlopeRoot& sr, double y_up, double k_up, double dk_up, double y_dn, double k_dn,
              double dk_dn, double inv_dist) {
  const double s = slope - (y_dn - y_up) * inv_dist;
  const double k = 0.5 * (k_up + k_dn);
  const double a = std::abs(s);
  double root, droot;  // |S|^(1/2) sgn(S) and its derivative in S
  if (a > sr.s_eps) {
    root = std::sqrt(a), droot = 0.5 / root;
  } else {
    root = a * sr.inv_root_eps, droot = sr.inv_root_eps;
  }
  if (s < 0) root = -root;
  // dS/dy_up = 1/dist, dS/dy_dn = −1/dist.
  const double k_droot = k * droot * inv_dist;
  return {k * root, k_droot + 0.5 * dk_up * root, -k_droot + 0.5 * dk_dn * root};
}

}  // namespace

void diffusionWave(RouteContext& ctx) {
  const hydraulics::Section& sec = ctx.reach.section;
  // ReachRouter::route gives a pipe above its capacity to vpmc.
  REACHWISE_ASSERT(!(sec.shape() == hydraulics::Shape::Circle && ctx.q_peak_m3s > 0.99 * sec.capacity()));
  const double length = ctx.reach.length_m, dt = ctx.dt_s;
  const double slope = sec.bedSlope();
  const double q_lo = std::max(ctx.q_in_min_m3s, 1e-6 * ctx.q_peak_m3s), q_hi = ctx.q_peak_m3s;
  const DiffusionGrid g = chooseGrid(sec, length, q_lo, q_hi, ctx.rise_s, dt, ctx.options.limits);
  const std::size_t n = g.dx.size(), m = g.reach_cells;
  const std::uint32_t k = g.substeps;
  const double dts = dt / k;
  // Manning's formula tabulated over the depths this run reaches (twice
  // the peak's normal depth; deeper is computed directly): the solver
  // evaluates it in every cell at every Newton step.
  const hydraulics::ConveyanceTable conveyance(sec, 2.0 * sec.normalDepth(std::max(q_hi, 1e-9)));
  const Channel ch{conveyance, slope, std::sqrt(slope), 1.0 / std::sqrt(slope)};
  const SlopeRoot slope_root(slope);
  std::vector<double> inv_dist(n);  // face i (1..n−1): 1 / the distance between the centres of cells i−1 and i
  for (std::size_t i = 1; i < n; ++i) inv_dist[i] = 1.0 / (0.5 * (g.dx[i - 1] + g.dx[i]));

  // Report the grid: cells over the reach as sub-reaches, and the Cunge
  // figures at the reference flow on it (C, D; X is not used).
  ReachNumerics& num = ctx.numerics;
  const hydraulics::FlowState ref = sec.normalFlow(std::max(ctx.q_ref_m3s, 1e-9));
  num.subreaches = static_cast<std::uint32_t>(m);
  num.substeps = k;
  num.dx_m = g.dx[0];
  num.dt_sub_s = dts;
  num.celerity_ms = ref.celerity_ms;
  num.courant = ref.celerity_ms * dts / g.dx[0];
  num.cell_reynolds = cellDiffusionRatio(std::max(ctx.q_ref_m3s, 1e-9), ref.top_width_m, slope, ref.celerity_ms, g.dx[0]);
  num.x = std::numeric_limits<double>::quiet_NaN();
  num.k_s = g.dx[0] / ref.celerity_ms;

  // Initial state: steady flow of the first sample, lateral inflow
  // accumulating along the reach (and carried on through the buffer).
  const double in0 = ctx.inflow[0], lat0 = ctx.lateral.empty() ? 0.0 : ctx.lateral[0];
  std::vector<double> y(n), y_prev(n), area_old(n), flux_old(n + 1), res(n), lo(n), di(n), up(n), inv_di(n);
  {
    double x = 0;
    for (std::size_t i = 0; i < n; ++i) {
      x += 0.5 * g.dx[i];
      const double q = in0 + lat0 * std::min(x, length) / length;
      y[i] = sec.normalDepth(std::max(q, 1e-9));
      x += 0.5 * g.dx[i];
    }
  }
  // Per cell: conveyance and its derivative, area and top width at the
  // current depths; face fluxes (face 0 the inflow, face i between cells
  // i−1 and i, face n the buffer's end in normal flow, K S0^(1/2)).
  std::vector<double> kc(n), dkc(n), area(n), width(n), flux(n + 1);
  std::vector<Flux> face(n + 1);
  auto evaluate = [&](double inflow) {
    for (std::size_t i = 0; i < n; ++i) {
      ch.conveyance(y[i], kc[i], dkc[i]);
      area[i] = sec.area(y[i]);
      width[i] = sec.topWidth(y[i]);
    }
    face[0] = {inflow, 0.0, 0.0};
    for (std::size_t i = 1; i < n; ++i)
      face[i] = faceFlux(slope, slope_root, y[i - 1], kc[i - 1], dkc[i - 1], y[i], kc[i], dkc[i], inv_dist[i]);
    face[n] = {kc[n - 1] * ch.sqrt_slope, dkc[n - 1] * ch.sqrt_slope, 0.0};
    for (std::size_t i = 0; i <= n; ++i) flux[i] = face[i].q;
  };
  auto storage = [&]() {
    double s = 0;
    for (std::size_t i = 0; i < m; ++i) s += g.dx[i] * area[i];
    return s;
  };
  // The steady state of the first sample on this grid: pseudo-time steps
  // of 10 sub-steps each with the first sample's forcing, until no depth
  // moves by more than 1e-9 m (the normal depths above are only close to
  // it where lateral inflow makes the flow grow along the reach).
  auto solveStep = [&](double inflow_end, double lat_per_m, double step_s) {
    area_old = area;
    bool converged = false;
    for (int it = 0; it <= kMaxNewton; ++it) {
      evaluate(inflow_end);
      if (converged) return;
      if (it == kMaxNewton) {
        // Met at flows far beyond the channel's (a unit or typing error in
        // the forcing, say): a limit of the method, told as such.
        char peak[32];
        std::snprintf(peak, sizeof peak, "%.4g", ctx.q_peak_m3s);
        throw InvalidParameter("discharge", std::string("the diffusion-wave solver did not converge within ") +
                                                std::to_string(kMaxNewton) + " iterations on this reach (inflow peak " +
                                                peak + " m3/s): check the forcing's values and units, or route "
                                                "the reach with a Cunge method (--method mc, or --diffusion-below 0 "
                                                "with vpmc)");
      }
      for (std::size_t i = 0; i < n; ++i) {
        const double lat_i = i < m ? lat_per_m * g.dx[i] : 0.0;
        res[i] = g.dx[i] * (area[i] - area_old[i]) -
                 step_s * (kTheta * (flux[i] - flux[i + 1]) + (1 - kTheta) * (flux_old[i] - flux_old[i + 1]) + lat_i);
        // dR_i/dy_{i−1}, dR_i/dy_i, dR_i/dy_{i+1}.
        lo[i] = -step_s * kTheta * face[i].d_up;
        di[i] = g.dx[i] * width[i] - step_s * kTheta * (face[i].d_dn - face[i + 1].d_up);
        up[i] = step_s * kTheta * face[i + 1].d_dn;
      }
      // Thomas algorithm (the system is diagonally dominant: storage on
      // the diagonal, fluxes increasing in the upstream depth). The
      // reciprocals of the eliminated diagonal are taken beside the
      // elimination, off its chain of dependent operations, so the back
      // substitution multiplies.
      inv_di[0] = 1.0 / di[0];
      for (std::size_t i = 1; i < n; ++i) {
        const double w = lo[i] / di[i - 1];
        di[i] -= w * up[i - 1];
        res[i] -= w * res[i - 1];
        inv_di[i] = 1.0 / di[i];
      }
      res[n - 1] *= inv_di[n - 1];
      for (std::size_t i = n - 1; i-- > 0;) res[i] = (res[i] - up[i] * res[i + 1]) * inv_di[i];
      // Each depth change held to half the depth (Newton overshoots where a
      // two-stage section's conveyance kinks at the bank).
      double largest = 0;
      for (std::size_t i = 0; i < n; ++i) {
        const double cap = 0.5 * std::max(y[i], 1e-3);
        const double d = std::clamp(res[i], -cap, cap);
        y[i] = std::max(y[i] - d, 1e-6);
        largest = std::max(largest, std::abs(d));
      }
      converged = largest < kDepthTolerance;
    }
  };
  evaluate(in0);
  if (lat0 > 0) {
    for (int it = 0; it < 1000; ++it) {
      const std::vector<double> before = y;
      flux_old = flux;
      solveStep(in0, lat0 / length, 10 * dts);
      double moved = 0;
      for (std::size_t i = 0; i < n; ++i) moved = std::max(moved, std::abs(y[i] - before[i]));
      if (moved < 1e-9) break;
    }
  }
  y_prev = y;
  ctx.storage_start_m3 = storage();
  ctx.q.assign(1, 0.0);

  Totals& tot = ctx.totals;
  flux_old = flux;
  ctx.out[0] = flux_old[m];
  const std::size_t steps = ctx.inflow.size();
  for (std::size_t step = 0; step + 1 < steps; ++step) {
    for (std::uint32_t s = 1; s <= k; ++s) {
      const double f0 = double(s - 1) / k, f1 = double(s) / k;
      const double in1 = ctx.inflow[step] + (ctx.inflow[step + 1] - ctx.inflow[step]) * f1;
      double lat = 0;  // lateral inflow per metre of reach, mean over the sub-step
      if (!ctx.lateral.empty()) {
        const double l0 = ctx.lateral[step] + (ctx.lateral[step + 1] - ctx.lateral[step]) * f0;
        const double l1 = ctx.lateral[step] + (ctx.lateral[step + 1] - ctx.lateral[step]) * f1;
        lat = 0.5 * (l0 + l1) / length;
      }
      // Newton on R_i = dx_i (A(y_i) − A_old_i) − dts [θ (F_i − F_{i+1}) +
      // (1 − θ)(F_old_i − F_old_{i+1}) + q_L dx_i (reach cells)], stopping
      // once a Newton step moves no depth by more than kDepthTolerance; the
      // fluxes of the last evaluation are those of the final depths.
      // Newton starts from the depths extrapolated from the last two
      // sub-steps (held to half their change's size below zero).
      for (std::size_t i = 0; i < n; ++i) {
        const double now = y[i];
        y[i] = std::max(now + (now - y_prev[i]), 0.5 * now);
        y_prev[i] = now;
      }
      solveStep(in1, lat, dts);
      tot.out += dts * (kTheta * flux[m] + (1 - kTheta) * flux_old[m]);
      tot.in += dts * (kTheta * flux[0] + (1 - kTheta) * flux_old[0]);
      tot.lat += dts * lat * length;
      flux_old = flux;
    }
    ctx.out[step + 1] = flux_old[m];
  }
  ctx.storage_end_m3 = storage();
}

}  // namespace reachwise::routing::methods
