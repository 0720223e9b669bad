#include "support/reference/DiffusionWave.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "support/reference/Hydrograph.hpp"

namespace testsupport::reference {

namespace {

using reachwise::hydraulics::Section;

/// sgn(S) |S|^(1/2) and its derivative, made linear for |S| < eps so that
/// Newton's Jacobian stays finite where the water surface is level (the flux
/// there is below 1 % of the uniform-flow flux for eps = 1e-4 S0).
struct SlopeRoot {
  double eps;
  double value(double s) const {
    const double a = std::abs(s);
    if (a < eps) return s / std::sqrt(eps);
    return std::copysign(std::sqrt(a), s);
  }
  double derivative(double s) const {
    const double a = std::abs(s);
    if (a < eps) return 1.0 / std::sqrt(eps);
    return 0.5 / std::sqrt(a);
  }
};

}  // namespace

DiffusionWaveRun routeDiffusionWave(const Section& section, double length_m,
                                    std::span<const double> inflow, double dt_out,
                                    const DiffusionWaveGrid& grid, std::span<const double> lateral) {
  if (grid.cells < 2 || grid.substeps < 1 || inflow.size() < 2 || !(length_m > 0) || !(dt_out > 0))
    throw std::invalid_argument("routeDiffusionWave: bad grid or inflow");
  if (!lateral.empty() && (lateral.size() != inflow.size() || lateral[0] != 0))
    throw std::invalid_argument("routeDiffusionWave: lateral inflow of another length, or not starting at 0");
  const double s0 = section.bedSlope();
  const double sqrt_s0 = std::sqrt(s0);
  const double theta = grid.theta;
  const SlopeRoot root{1e-4 * s0};

  // Cells: N uniform over [0, L], then the buffer.
  const std::size_t n_reach = grid.cells;
  const std::vector<double> dx = cellLengths(length_m, n_reach, grid.buffer_m, grid.growth, grid.max_buffer_cell_m);
  const std::size_t m = dx.size();
  // Distance between the centres on either side of face f (1 <= f < m).
  std::vector<double> gap(m, 0.0);
  for (std::size_t f = 1; f < m; ++f) gap[f] = 0.5 * (dx[f - 1] + dx[f]);

  // Conveyance K(y) = Q(y) / S0^(1/2) and dK/dy from the section's Manning discharge.
  std::vector<double> y(m), k(m), dk(m), area(m), width(m);
  auto evaluate = [&]() {
    for (std::size_t i = 0; i < m; ++i) {
      double q = 0, dq = 0;
      section.dischargeAndDerivative(y[i], q, dq);
      k[i] = q / sqrt_s0;
      dk[i] = dq / sqrt_s0;
      area[i] = section.area(y[i]);
      width[i] = section.topWidth(y[i]);
    }
  };
  // Face fluxes F[f], f = 0 (inflow) ... m (end of the buffer), and their
  // derivatives with respect to the depth of the cell on the left (dl) and
  // on the right (dr).
  std::vector<double> flux(m + 1), dl(m + 1, 0.0), dr(m + 1, 0.0);
  auto fluxes = [&](double q_in) {
    flux[0] = q_in;
    for (std::size_t f = 1; f < m; ++f) {
      const double kf = 0.5 * (k[f - 1] + k[f]);
      const double s = s0 - (y[f] - y[f - 1]) / gap[f];
      const double g = root.value(s), dg = root.derivative(s);
      flux[f] = kf * g;
      dl[f] = 0.5 * dk[f - 1] * g + kf * dg / gap[f];
      dr[f] = 0.5 * dk[f] * g - kf * dg / gap[f];
    }
    flux[m] = k[m - 1] * sqrt_s0;  // normal flow at the end: dy/dx = 0
    dl[m] = dk[m - 1] * sqrt_s0;
  };

  const double y0 = section.normalDepth(inflow[0]);
  std::fill(y.begin(), y.end(), y0);
  evaluate();
  fluxes(inflow[0]);
  std::vector<double> old_flux = flux, old_area = area;
  auto storage = [&](std::size_t cells) {
    double s = 0;
    for (std::size_t i = 0; i < cells; ++i) s += dx[i] * area[i];
    return s;
  };
  const double reach_storage0 = storage(n_reach), domain_storage0 = storage(m);

  DiffusionWaveRun run;
  run.domain_cells = m;
  run.outflow_m3s.assign(inflow.size(), 0.0);
  run.outflow_m3s[0] = flux[n_reach];

  const double dt = dt_out / static_cast<double>(grid.substeps);
  // Residual of every cell's volume balance over a step (m^3), its
  // tridiagonal Jacobian (a below, b on, c above the diagonal), and the
  // largest residual as a depth, max |res_i| / (dx_i T_i).
  std::vector<double> res(m), a(m), b(m), c(m), cp(m), dp(m), start(m);
  // Lateral inflow per metre at the step's two ends (theta-weighted as the fluxes).
  double lat_old = 0, lat_new = 0;
  auto assemble = [&](double q_in) {
    evaluate();
    fluxes(q_in);
    double largest = 0;
    const double lat = theta * lat_new + (1 - theta) * lat_old;
    for (std::size_t i = 0; i < m; ++i) {
      res[i] = dx[i] * (area[i] - old_area[i]) +
               dt * (theta * (flux[i + 1] - flux[i]) + (1 - theta) * (old_flux[i + 1] - old_flux[i])) -
               (i < n_reach ? dt * lat * dx[i] : 0.0);
      b[i] = dx[i] * width[i] + dt * theta * (dl[i + 1] - (i > 0 ? dr[i] : 0.0));
      c[i] = i + 1 < m ? dt * theta * dr[i + 1] : 0.0;
      a[i] = i > 0 ? -dt * theta * dl[i] : 0.0;
      largest = std::max(largest, std::abs(res[i]) / (dx[i] * width[i]));
    }
    return largest;
  };
  const std::size_t steps = (inflow.size() - 1) * grid.substeps;
  for (std::size_t step = 1; step <= steps; ++step) {
    const double t = static_cast<double>(step) * dt;
    const double q_in = sampleAt(inflow, dt_out, t);
    lat_old = lat_new;
    lat_new = lateral.empty() ? 0.0 : sampleAt(lateral, dt_out, t) / length_m;
    // Newton's method with a backtracking line search on the largest
    // residual (in metres of depth): near the bank of a two-stage section
    // A(y) and K(y) have kinks, where plain Newton can cycle.
    double norm = assemble(q_in);
    bool done = false;
    for (int it = 0; it < 200 && !done; ++it) {
      // Thomas algorithm for J delta = res.
      cp[0] = c[0] / b[0];
      dp[0] = res[0] / b[0];
      for (std::size_t i = 1; i < m; ++i) {
        const double den = b[i] - a[i] * cp[i - 1];
        cp[i] = c[i] / den;
        dp[i] = (res[i] - a[i] * dp[i - 1]) / den;
      }
      double largest = 0;
      for (std::size_t i = m; i-- > 0;) {
        if (i + 1 < m) dp[i] -= cp[i] * dp[i + 1];
        largest = std::max(largest, std::abs(dp[i]));
      }
      ++run.newton_iterations;
      done = largest < 1e-12 * (1.0 + y0);
      start = y;
      for (double lambda = 1.0;; lambda *= 0.5) {
        // Depths stay positive: a step may at most halve a depth.
        for (std::size_t i = 0; i < m; ++i) y[i] = std::max(start[i] - lambda * dp[i], 0.5 * start[i]);
        const double trial = assemble(q_in);
        if (done || trial <= (1 - 1e-4 * lambda) * norm || lambda < 1e-3) {
          norm = trial;
          break;
        }
      }
    }
    if (!done)
      throw std::runtime_error("routeDiffusionWave: Newton did not converge at step " + std::to_string(step));
    run.inflow_m3 += dt * (theta * flux[0] + (1 - theta) * old_flux[0]) +
                     dt * (theta * lat_new + (1 - theta) * lat_old) * length_m;
    run.outflow_m3 += dt * (theta * flux[n_reach] + (1 - theta) * old_flux[n_reach]);
    run.end_outflow_m3 += dt * (theta * flux[m] + (1 - theta) * old_flux[m]);
    old_flux = flux;
    old_area = area;
    if (step % grid.substeps == 0) run.outflow_m3s[step / grid.substeps] = flux[n_reach];
  }
  run.steps = steps;
  run.storage_change_m3 = storage(n_reach) - reach_storage0;
  run.domain_storage_change_m3 = storage(m) - domain_storage0;
  return run;
}

ConvergedRun convergeDiffusionWave(const Section& section, double length_m,
                                   std::span<const double> inflow, double dt_s, double rise_s,
                                   const Refinement& refinement, std::span<const double> lateral) {
  // The first grid from the flows the reach carries: top and lateral inflow together.
  std::vector<double> total(inflow.begin(), inflow.end());
  for (std::size_t i = 0; i < lateral.size() && i < total.size(); ++i) total[i] += lateral[i];
  const FirstGrid first = firstGrid(section, length_m, total, dt_s, rise_s, refinement);
  DiffusionWaveGrid grid;
  grid.cells = first.cells;
  grid.substeps = first.substeps;
  grid.buffer_m = first.buffer_m;
  grid.max_buffer_cell_m = first.max_buffer_cell_m;
  grid.theta = refinement.theta;
  return refineUntilSettled<DiffusionWaveRun>(grid, inflow.front(), dt_s, refinement,
                                              [&](const DiffusionWaveGrid& g) {
                                                return routeDiffusionWave(section, length_m, inflow, dt_s, g, lateral);
                                              });
}

}  // namespace testsupport::reference
