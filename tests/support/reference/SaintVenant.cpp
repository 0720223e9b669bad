#include "support/reference/SaintVenant.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

namespace testsupport::reference {

namespace {

using reachwise::hydraulics::Section;

constexpr double kGravity = 9.81;  // m/s^2

/// A banded matrix with kl = 2 sub- and ku = 2 superdiagonals (what the
/// box scheme gives when the unknowns are ordered Q_0, y_0, Q_1, y_1, ...
/// and the equations upstream boundary, then continuity and momentum box by
/// box, then downstream boundary), solved by Gaussian elimination with
/// partial pivoting (Golub & Van Loan 1996, *Matrix Computations* §4.3,
/// from memory).
/// Row i keeps the columns i − kl ... i + ku + kl, room for the fill-in that
/// row exchanges bring.
class BandSystem {
public:
  static constexpr std::size_t kl = 2, ku = 2, width = 2 * kl + ku + 1;

  void resize(std::size_t n) {
    n_ = n;
    band_.assign(n * width, 0.0);
  }
  void clear() { std::fill(band_.begin(), band_.end(), 0.0); }
  /// Entry (i, j); j must be within i − kl ... i + ku + kl.
  double& at(std::size_t i, std::size_t j) { return band_[i * width + (j + kl - i)]; }

  /// Solves A x = b in place (b becomes x); destroys A. Returns false if a
  /// pivot is zero (singular system).
  bool solve(std::vector<double>& b) {
    for (std::size_t k = 0; k < n_; ++k) {
      const std::size_t last_row = std::min(n_ - 1, k + kl);
      const std::size_t last_col = std::min(n_ - 1, k + kl + ku);
      std::size_t p = k;
      for (std::size_t i = k + 1; i <= last_row; ++i)
        if (std::abs(at(i, k)) > std::abs(at(p, k))) p = i;
      if (at(p, k) == 0.0) return false;
      if (p != k) {
        for (std::size_t j = k; j <= last_col; ++j) std::swap(at(k, j), at(p, j));
        std::swap(b[k], b[p]);
      }
      const double pivot = at(k, k);
      for (std::size_t i = k + 1; i <= last_row; ++i) {
        const double f = at(i, k) / pivot;
        if (f == 0.0) continue;
        for (std::size_t j = k + 1; j <= last_col; ++j) at(i, j) -= f * at(k, j);
        b[i] -= f * b[k];
      }
    }
    for (std::size_t k = n_; k-- > 0;) {
      const std::size_t last_col = std::min(n_ - 1, k + kl + ku);
      double s = b[k];
      for (std::size_t j = k + 1; j <= last_col; ++j) s -= at(k, j) * b[j];
      b[k] = s / at(k, k);
    }
    return true;
  }

private:
  std::size_t n_ = 0;
  std::vector<double> band_;
};

/// What a node contributes to the box equations at one time level, from its
/// discharge Q and depth y: area A, top width T = dA/dy, momentum flux
/// M = Q^2/A (beta = 1) and friction term F = A S_f = A Q|Q|/K^2, with the
/// derivatives of M and F that Newton's Jacobian needs.
struct NodeTerms {
  double area = 0, width = 0, momentum = 0, friction = 0;
  double dmomentum_dq = 0, dmomentum_dy = 0, dfriction_dq = 0, dfriction_dy = 0;
  double froude_squared = 0;

  NodeTerms(const Section& section, double sqrt_s0, double q, double y) {
    double qn = 0, dqn = 0;
    section.dischargeAndDerivative(y, qn, dqn);
    const double k = qn / sqrt_s0, dk = dqn / sqrt_s0;  // conveyance and dK/dy
    area = section.area(y);
    width = section.topWidth(y);
    momentum = q * q / area;
    dmomentum_dq = 2 * q / area;
    dmomentum_dy = -momentum * width / area;
    const double sf = q * std::abs(q) / (k * k);
    friction = area * sf;
    dfriction_dq = 2 * area * std::abs(q) / (k * k);
    dfriction_dy = width * sf - 2 * friction * dk / k;
    froude_squared = q * q * width / (kGravity * area * area * area);
  }
};

}  // namespace

SaintVenantRun routeSaintVenant(const Section& section, double length_m, std::span<const double> inflow,
                                double dt_out, const SaintVenantGrid& grid) {
  if (grid.cells < 2 || grid.substeps < 1 || inflow.size() < 2 || !(length_m > 0) || !(dt_out > 0) ||
      !(grid.theta >= 0.5 && grid.theta <= 1.0))
    throw std::invalid_argument("routeSaintVenant: bad grid or inflow");
  const double s0 = section.bedSlope();
  const double sqrt_s0 = std::sqrt(s0);
  const double theta = grid.theta;

  // Boxes: N uniform over [0, L], then the buffer; nodes 0 ... M.
  const std::size_t n_reach = grid.cells;
  const std::vector<double> dx = cellLengths(length_m, n_reach, grid.buffer_m, grid.growth, grid.max_buffer_cell_m);
  const std::size_t boxes = dx.size(), nodes = boxes + 1, unknowns = 2 * nodes;

  // State: discharge and depth at every node, now (the Newton iterate) and
  // at the start of the step (old_*).
  const double q0 = inflow[0];
  const double y0 = section.normalDepth(q0);
  std::vector<double> q(nodes, q0), y(nodes, y0);
  std::vector<NodeTerms> terms(nodes, NodeTerms(section, sqrt_s0, q0, y0));
  std::vector<double> old_q = q, old_y = y, prev_q = q, prev_y = y;
  std::vector<NodeTerms> old_terms = terms;

  // Scales of the residuals and of the Newton step.
  const double q_scale = *std::max_element(inflow.begin(), inflow.end());
  const double y_scale = y0, area_scale = section.area(y0);

  auto storage = [&](std::size_t n_boxes) {
    double s = 0;
    for (std::size_t j = 0; j < n_boxes; ++j) s += 0.5 * dx[j] * (terms[j].area + terms[j + 1].area);
    return s;
  };
  const double reach_storage0 = storage(n_reach), domain_storage0 = storage(boxes);

  SaintVenantRun run;
  run.domain_nodes = nodes;
  run.outflow_m3s.assign(inflow.size(), 0.0);
  run.outflow_m3s[0] = q[n_reach];

  const double dt = dt_out / static_cast<double>(grid.substeps);
  const double gdt = kGravity * dt;
  BandSystem jacobian;
  jacobian.resize(unknowns);
  std::vector<double> residual(unknowns), newton_step(unknowns), start_q(nodes), start_y(nodes);

  // Residuals of all equations at the current iterate and their Jacobian;
  // returns the largest scaled residual (continuity per
  // reference area, momentum and boundaries per reference discharge).
  auto assemble = [&](double q_in) {
    for (std::size_t i = 0; i < nodes; ++i) terms[i] = NodeTerms(section, sqrt_s0, q[i], y[i]);
    jacobian.clear();
    double largest = 0;
    // Upstream: Q_0 = inflow.
    residual[0] = q[0] - q_in;
    largest = std::abs(residual[0]) / q_scale;
    jacobian.at(0, 0) = 1.0;
    for (std::size_t j = 0; j < boxes; ++j) {
      const NodeTerms &l = terms[j], &r = terms[j + 1], &lo = old_terms[j], &ro = old_terms[j + 1];
      const double lambda = dt / dx[j];
      // Continuity over the box and the step, divided by dx (m^2):
      //   [(A_j + A_{j+1})/2]^{n+1} − [...]^n + (dt/dx) [Q_{j+1} − Q_j]^{n+theta} = 0.
      const std::size_t rc = 2 * j + 1, rm = 2 * j + 2;
      residual[rc] = 0.5 * (l.area - lo.area + r.area - ro.area) +
                     lambda * (theta * (q[j + 1] - q[j]) + (1 - theta) * (old_q[j + 1] - old_q[j]));
      // Momentum over the box and the step, divided by dx (m^3/s):
      //   [(Q_j + Q_{j+1})/2]^{n+1} − [...]^n + (dt/dx) [M_{j+1} − M_j]^{n+theta}
      //   + g dt Abar^{n+theta} (dh/dx)^{n+theta} + g dt [(F_j + F_{j+1})/2]^{n+theta} = 0,
      // dh/dx = (y_{j+1} − y_j)/dx − S0 and Abar the box's mean area.
      const double area_new = 0.5 * (l.area + r.area), area_old = 0.5 * (lo.area + ro.area);
      const double area_bar = theta * area_new + (1 - theta) * area_old;
      const double surface_slope =
          (theta * (y[j + 1] - y[j]) + (1 - theta) * (old_y[j + 1] - old_y[j])) / dx[j] - s0;
      residual[rm] = 0.5 * (q[j] - old_q[j] + q[j + 1] - old_q[j + 1]) +
                     lambda * (theta * (r.momentum - l.momentum) + (1 - theta) * (ro.momentum - lo.momentum)) +
                     gdt * area_bar * surface_slope +
                     gdt * 0.5 * (theta * (l.friction + r.friction) + (1 - theta) * (lo.friction + ro.friction));
      largest = std::max({largest, std::abs(residual[rc]) / area_scale, std::abs(residual[rm]) / q_scale});
      const std::size_t ql = 2 * j, yl = 2 * j + 1, qr = 2 * j + 2, yr = 2 * j + 3;
      jacobian.at(rc, ql) = -lambda * theta;
      jacobian.at(rc, yl) = 0.5 * l.width;
      jacobian.at(rc, qr) = lambda * theta;
      jacobian.at(rc, yr) = 0.5 * r.width;
      jacobian.at(rm, ql) = 0.5 - lambda * theta * l.dmomentum_dq + 0.5 * gdt * theta * l.dfriction_dq;
      jacobian.at(rm, yl) = -lambda * theta * l.dmomentum_dy +
                            gdt * theta * (0.5 * l.width * surface_slope - area_bar / dx[j]) +
                            0.5 * gdt * theta * l.dfriction_dy;
      jacobian.at(rm, qr) = 0.5 + lambda * theta * r.dmomentum_dq + 0.5 * gdt * theta * r.dfriction_dq;
      jacobian.at(rm, yr) = lambda * theta * r.dmomentum_dy +
                            gdt * theta * (0.5 * r.width * surface_slope + area_bar / dx[j]) +
                            0.5 * gdt * theta * r.dfriction_dy;
    }
    // Downstream: normal flow, Q_M = K(y_M) S0^(1/2).
    const std::size_t last = unknowns - 1, m = nodes - 1;
    double qn = 0, dqn = 0;
    section.dischargeAndDerivative(y[m], qn, dqn);
    residual[last] = q[m] - qn;
    largest = std::max(largest, std::abs(residual[last]) / q_scale);
    jacobian.at(last, 2 * m) = 1.0;
    jacobian.at(last, 2 * m + 1) = -dqn;
    return largest;
  };

  const std::size_t steps = (inflow.size() - 1) * grid.substeps;
  double max_froude2 = 0;
  for (std::size_t step = 1; step <= steps; ++step) {
    const double q_in = sampleAt(inflow, dt_out, static_cast<double>(step) * dt);
    // First guess: the state extrapolated linearly from the last two steps
    // (measured: about 2 Newton iterations per step instead of 3 from the
    // last state).
    if (step > 1)
      for (std::size_t i = 0; i < nodes; ++i) {
        q[i] = 2 * old_q[i] - prev_q[i];
        y[i] = std::max(2 * old_y[i] - prev_y[i], 0.5 * old_y[i]);
      }
    // Newton's method with a backtracking line search on the largest scaled
    // residual: near the bank of a two-stage section A(y) and K(y) have
    // kinks, where plain Newton can cycle.
    double norm = assemble(q_in);
    bool done = false;
    for (int it = 0; it < 100 && !done; ++it) {
      if (!jacobian.solve(residual))
        throw std::runtime_error("routeSaintVenant: singular Jacobian at step " + std::to_string(step));
      double largest = 0;
      for (std::size_t i = 0; i < nodes; ++i)
        largest = std::max({largest, std::abs(residual[2 * i]) / q_scale, std::abs(residual[2 * i + 1]) / y_scale});
      ++run.newton_iterations;
      done = largest < 1e-11;
      start_q = q;
      start_y = y;
      std::swap(newton_step, residual);  // assemble() overwrites `residual`
      for (double lambda = 1.0;; lambda *= 0.5) {
        // Depths stay positive: a step may at most halve a depth.
        for (std::size_t i = 0; i < nodes; ++i) {
          q[i] = start_q[i] - lambda * newton_step[2 * i];
          y[i] = std::max(start_y[i] - lambda * newton_step[2 * i + 1], 0.5 * start_y[i]);
        }
        const double trial = assemble(q_in);
        if (done || trial <= (1 - 1e-4 * lambda) * norm || lambda < 1e-3) {
          norm = trial;
          break;
        }
      }
    }
    if (!done)
      throw std::runtime_error("routeSaintVenant: Newton did not converge at step " + std::to_string(step));
    for (std::size_t i = 0; i <= n_reach; ++i) max_froude2 = std::max(max_froude2, terms[i].froude_squared);
    if (max_froude2 >= 1.0)
      throw std::runtime_error("routeSaintVenant: supercritical flow at step " + std::to_string(step));
    run.inflow_m3 += dt * (theta * q[0] + (1 - theta) * old_q[0]);
    run.outflow_m3 += dt * (theta * q[n_reach] + (1 - theta) * old_q[n_reach]);
    run.end_outflow_m3 += dt * (theta * q[boxes] + (1 - theta) * old_q[boxes]);
    prev_q.swap(old_q);
    prev_y.swap(old_y);
    old_q = q;
    old_y = y;
    old_terms = terms;
    if (step % grid.substeps == 0) run.outflow_m3s[step / grid.substeps] = q[n_reach];
  }
  run.max_froude = std::sqrt(max_froude2);
  run.steps = steps;
  run.storage_change_m3 = storage(n_reach) - reach_storage0;
  run.domain_storage_change_m3 = storage(boxes) - domain_storage0;
  return run;
}

// The buffer is the diffusion-wave reference's (firstGrid): long enough
// that the normal-flow end reaches back to x = L only by diffusion, by a
// negligible amount within the run. The dynamic part of a disturbance does
// not get that far: linearised about uniform flow, the momentum equation
// relaxes a discharge departure from the local rating at the rate
// r = 2 g S0 / V (friction), while it travels at most V + (g D)^(1/2), so
// it fades over (V + (g D)^(1/2)) / r, about 1 to 4 km on the flattest
// reaches of the accuracy matrix (S0 = 1e-5) and under 1 km at
// S0 = 0.0002, against a buffer of max(L/2, 20 ell_max): over 70 km on the
// matrix's rows with Ponce number < 30 (1400 km and more at S0 = 1e-5).
// SaintVenantReferenceTest checks that a buffer three times longer leaves
// the outflow at x = L unchanged.
ConvergedSaintVenant convergeSaintVenant(const Section& section, double length_m, std::span<const double> inflow,
                                         double dt_s, double rise_s, const Refinement& refinement) {
  const FirstGrid first = firstGrid(section, length_m, inflow, dt_s, rise_s, refinement);
  SaintVenantGrid grid;
  grid.cells = first.cells;
  grid.substeps = first.substeps;
  grid.buffer_m = first.buffer_m;
  grid.max_buffer_cell_m = first.max_buffer_cell_m;
  grid.theta = refinement.theta;
  return refineUntilSettled<SaintVenantRun>(grid, inflow.front(), dt_s, refinement, [&](const SaintVenantGrid& g) {
    return routeSaintVenant(section, length_m, inflow, dt_s, g);
  });
}

}  // namespace testsupport::reference
