#pragma once
/// \file
/// The time stepping every routing method shares (private to src/routing).
/// A method's set-up (src/routing/methods/) checks its own inputs, chooses
/// the grid, reports its parameters and builds its cell; `sweepReach` then
/// sets the initial state, advances the reach over every sub-step, keeps the
/// volume totals and storage, and clamps and counts negative flows.
///
/// A cell is any type with
///   double operator()(double left_new, double left_old, double old, double lat) const
///     — Q[j+1,n+1] from Q[j,n+1], Q[j,n], Q[j+1,n] and the lateral share
///       (m^3/s) entering the sub-reach during the sub-step;
///   double storage(const std::vector<double>& q) const
///     — the reach's storage (m^3) for the section flows q.
/// The sweep works on a copy of the cell, so a cell that counts events
/// counts them through a reference (into ReachNumerics, say).

#include <cstdint>
#include <optional>
#include <span>
#include <utility>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/RatingTable.hpp"
#include "reachwise/routing/Muskingum.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/routing/Results.hpp"

namespace reachwise::routing {

/// Forcing of one output step, interpolated linearly to sub-steps.
struct StepForcing {
  double in0, in1, lat0, lat1;
  double lateralAt(double f) const { return lat0 + (lat1 - lat0) * f; }
};

/// Volumes through the reach over the run (m^3): top inflow, lateral, outflow.
struct Totals {
  double in = 0, lat = 0, out = 0;
};

/// Forcing of one row (one sub-step over the whole reach): the top inflow
/// at its end and the lateral inflow per sub-reach (q_L Δx, m^3/s, the mean
/// of the sub-step's end values spread evenly over the m sub-reaches).
struct Row {
  double inflow, lat;
};

/// The rows of a run in order, k per output step, the forcing linear
/// within a step. A cursor (step n, sub-step s) rather than a row number,
/// so a row costs no integer division: short reaches have only a few cells
/// per row and the division showed beside them.
struct Rows {
  std::span<const double> inflow, lateral;
  std::uint32_t m, k;
  std::size_t n = 0;      // step of the next row
  std::uint32_t s = 1;    // its sub-step, 1..k

  const double* fraction;  // fraction[s] = s / k, s = 0..k

  std::size_t count() const { return (inflow.size() - 1) * k; }
  /// The next row; `ends_step` set when it is a step's last sub-step (its
  /// outflow is the sample at step n + 1).
  Row next(bool& ends_step, std::size_t& step) {
    const double fr = fraction[s], fr0 = fraction[s - 1];
    const double in = inflow[n] + (inflow[n + 1] - inflow[n]) * fr;
    // Without lateral inflow the share is +0 either way; skipping it takes a
    // division off every row.
    double lat = 0.0;
    if (!lateral.empty()) {
      const StepForcing f{inflow[n], inflow[n + 1], lateral[n], lateral[n + 1]};
      lat = 0.5 * (f.lateralAt(fr0) + f.lateralAt(fr)) / m;
    }
    const Row row{in, lat};
    step = n;
    ends_step = s == k;
    if (ends_step) s = 1, ++n;
    else ++s;
    return row;
  }
};

/// Advances q (the m+1 section flows) by one row; returns the outflow.
template <class Cell>
double oneRow(std::vector<double>& q, std::uint32_t m, Row a, Cell& cell) {
  double left_new = a.inflow, left_old = q[0];
  q[0] = left_new;
  for (std::uint32_t j = 1; j <= m; ++j) {
    const double old = q[j];
    q[j] = cell(left_new, left_old, old, a.lat);
    left_new = q[j];
    left_old = old;
  }
  return q[m];
}

/// Advances q by two rows a and b at once, b one cell behind a. Cell j of a
/// waits on cell j−1 of a; cell j−1 of b waits on cell j−2 of b and on
/// cells j−2, j−1 of a, all done one iteration earlier. So each iteration
/// holds two independent dependency chains that the core overlaps, while
/// every cell sees the same inputs as in row-by-row order (same results).
/// Row a lives in registers only; returns both outflows.
template <class Cell>
std::pair<double, double> twoRows(std::vector<double>& q, std::uint32_t m, Row a, Row b, Cell& cell) {
  double a_new = cell(a.inflow, q[0], q[1], a.lat);  // Q_a[1]
  double a_old = q[1];                                // Q_prev[1]
  double b_new = b.inflow, b_old = a.inflow;          // Q_b[0], Q_a[0]
  for (std::uint32_t j = 2; j <= m; ++j) {
    const double old = q[j];
    const double va = cell(a_new, a_old, old, a.lat);        // Q_a[j]
    const double vb = cell(b_new, b_old, a_new, b.lat);      // Q_b[j-1]
    q[j - 1] = vb;
    b_old = a_new, b_new = vb;
    a_old = old, a_new = va;
  }
  q[m] = cell(b_new, b_old, a_new, b.lat);  // Q_b[m]
  q[0] = b.inflow;
  return {a_new, q[m]};
}

/// Advances the reach over every row of the run with `cell`; keeps the
/// volume totals and writes the outflow at each output step. The cell is
/// taken by value: a local copy lets the compiler keep its parameters in
/// registers, where through a reference it must reload them after every
/// store to q (they might alias).
template <class Cell>
void sweep(std::uint32_t m, std::uint32_t k, std::span<const double> inflow,
           std::span<const double> lateral, double dt, std::vector<double>& q,
           std::vector<double>& out, Totals& tot, Cell cell) {
  // s / k once per route rather than twice per row (the same quotients).
  thread_local std::vector<double> fractions;
  fractions.resize(std::size_t{k} + 1);
  for (std::uint32_t i = 0; i <= k; ++i) fractions[i] = double(i) / k;
  Rows rows{inflow, lateral, m, k, 0, 1, fractions.data()};
  const std::size_t count = rows.count();
  const double dts = dt / k;
  double q_out = q[m];
  out[0] = q_out;
  const auto finishRow = [&](bool ends_step, std::size_t step, double q_out_new) {
    tot.out += 0.5 * dts * (q_out + q_out_new);
    q_out = q_out_new;
    if (ends_step) out[step + 1] = q_out;
  };
  std::size_t r = 0;
  bool ends_a, ends_b;
  std::size_t step_a, step_b;
  for (; r + 1 < count; r += 2) {
    const Row a = rows.next(ends_a, step_a);
    const Row b = rows.next(ends_b, step_b);
    const auto [out_a, out_b] = twoRows(q, m, a, b, cell);
    finishRow(ends_a, step_a, out_a);
    finishRow(ends_b, step_b, out_b);
  }
  if (r < count) {
    const Row a = rows.next(ends_a, step_a);
    finishRow(ends_a, step_a, oneRow(q, m, a, cell));
  }
  for (std::size_t n = 0; n + 1 < inflow.size(); ++n) {
    tot.in += 0.5 * dt * (inflow[n] + inflow[n + 1]);
    if (!lateral.empty()) tot.lat += 0.5 * dt * (lateral[n] + lateral[n + 1]);
  }
}

/// Storage of a reach with uniform sub-reach parameters, S = Σ K [X I + (1 − X) O].
inline double linearStorage(const std::vector<double>& q, double k_s, double x) {
  double s = 0;
  for (std::size_t j = 0; j + 1 < q.size(); ++j) s += k_s * (x * q[j] + (1.0 - x) * q[j + 1]);
  return s;
}

/// The cell of the constant-coefficient methods (`mc`, `muskingum`): the
/// same coefficients on every cell and step, and sub-reaches of storage
/// constant k_s and weight x.
struct ConstantCell {
  Coefficients cf;
  double k_s, x;
  double operator()(double left_new, double left_old, double old, double lat) const {
    return cf.in_new * left_new + cf.in_old * left_old + cf.out_old * old + cf.lateral * lat;
  }
  double storage(const std::vector<double>& q) const { return linearStorage(q, k_s, x); }
};

/// Whether a cell's result can fall below zero. With non-negative
/// coefficients and non-negative forcing it cannot, and the sweep skips the
/// check; otherwise a result below zero is set to zero and counted.
enum class Negatives { CannotOccur, ClampAndCount };

/// One reach's route as a method's set-up sees it: the reach, its forcing
/// and what the router's prologue found (read only), the router's buffers,
/// and what the route produces.
struct RouteContext {
  const ReachSpec& reach;
  const RouteOptions& options;
  std::span<const double> inflow, lateral;  ///< lateral empty = none
  double dt_s;
  double q_ref_m3s;     ///< reference flow: the rule of RouteOptions, or as forced
  double q_peak_m3s;    ///< highest total inflow (top + lateral)
  double q_in_min_m3s;  ///< lowest top inflow

  std::vector<double>& q;    ///< section flows, m + 1 of them
  std::vector<double>& out;  ///< outflow per output step, sized by the router
  /// The rating table of a method that reads one (ReachRouter::lastTable),
  /// and the storage of the last one, to rebuild in place.
  std::optional<hydraulics::RatingTable>& table;
  std::optional<hydraulics::RatingTable>& spare;

  /// Filled by the set-up (grid, parameters, its own counts) and the sweep
  /// (negative_clamps).
  ReachNumerics& numerics;
  Totals totals{};
  double storage_start_m3 = 0, storage_end_m3 = 0;
  double rise_s = 0;  ///< rise time of the total inflow's peak (ReachRun::rise_s)
  /// A saved state to start from (ReachRouter::route), or null: the steady
  /// state of the first sample. Its grid and reference flow are already in
  /// `options` and `q_ref_m3s`.
  const ReachState* start = nullptr;
  /// The rating table a set-up built (`vpmc`): its range and nodes.
  double table_min_q_m3s = 0, table_max_q_m3s = 0;
  std::uint32_t table_nodes = 0;
};

/// Routes the reach with `cell` on the grid the set-up put in
/// `ctx.numerics` (subreaches, substeps): the steady state of the first
/// sample, the storage before and after, the volume totals, the outflow.
/// Preconditions: a grid of at least one sub-reach and sub-step, forcing
/// already checked by the router, `ctx.out` sized to the forcing.
template <class Cell>
void sweepReach(RouteContext& ctx, const Cell& cell, Negatives negatives) {
  const std::uint32_t m = ctx.numerics.subreaches, k = ctx.numerics.substeps;
  REACHWISE_ASSERT(m >= 1 && k >= 1 && !ctx.inflow.empty() && ctx.out.size() == ctx.inflow.size());
  if (ctx.start) {
    // A saved state: its flows, on its own grid (the options force it).
    REACHWISE_ASSERT(ctx.start->q_m3s.size() == std::size_t{m} + 1);
    ctx.q.assign(ctx.start->q_m3s.begin(), ctx.start->q_m3s.end());
  } else {
    // Steady state of the first sample: lateral inflow accumulates linearly.
    const double inflow0 = ctx.inflow[0], lateral0 = ctx.lateral.empty() ? 0.0 : ctx.lateral[0];
    ctx.q.resize(m + 1);
    for (std::uint32_t j = 0; j <= m; ++j) ctx.q[j] = inflow0 + lateral0 * j / m;
  }
  ctx.storage_start_m3 = cell.storage(ctx.q);
  if (negatives == Negatives::CannotOccur) {
    sweep(m, k, ctx.inflow, ctx.lateral, ctx.dt_s, ctx.q, ctx.out, ctx.totals, cell);
  } else {
    std::uint64_t& clamps = ctx.numerics.negative_clamps;
    sweep(m, k, ctx.inflow, ctx.lateral, ctx.dt_s, ctx.q, ctx.out, ctx.totals,
          [cell, &clamps](double left_new, double left_old, double old, double lat)
              __attribute__((always_inline)) {
            const double v = cell(left_new, left_old, old, lat);
            if (v >= 0) return v;
            ++clamps;
            return 0.0;
          });
  }
  ctx.storage_end_m3 = cell.storage(ctx.q);
}

}  // namespace reachwise::routing
