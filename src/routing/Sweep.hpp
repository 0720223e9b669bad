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
///       (m^3/s) entering the sub-reach during the sub-step
///   (or, instead, the interface of CarriesFlowValues below);
///   double storage(const std::vector<double>& q) const
///     — the reach's storage (m^3) for the section flows q.
/// The sweep works on a copy of the cell, so a cell that counts events
/// counts them through a reference (into ReachNumerics, say).

#include <concepts>
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
  Row next() {
    const double fr = fraction[s], fr0 = fraction[s - 1];
    const double in = inflow[n] + (inflow[n + 1] - inflow[n]) * fr;
    // Without lateral inflow the share is +0 either way; skipping it takes a
    // division off every row.
    double lat = 0.0;
    if (!lateral.empty()) {
      const StepForcing f{inflow[n], inflow[n + 1], lateral[n], lateral[n + 1]};
      lat = 0.5 * (f.lateralAt(fr0) + f.lateralAt(fr)) / m;
    }
    if (s == k) s = 1, ++n;
    else ++s;
    return Row{in, lat};
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

/// A cell that computes values of its own from each flow (`Carry`) and can
/// take them from the sweep instead of computing them again: every section
/// flow is read by three cells (as Q[j,n+1], Q[j,n] and Q[j+1,n]), so
/// carrying them costs one evaluation per flow instead of three. It has
///   template <bool Count> Carry carry(double q, double area_q) const —
///     Count: q is a new flow of a section that feeds a cell (counted once,
///     where the cell counts anything, such as clamped parameters);
///   double areaOf(double q) const — Carry::a, all the outflow needs;
///   double operator()(left_new, left_old, old, lat, const Carry& of_left_new,
///                     const Carry& of_left_old, double area_of_old,
///                     double& area_of_result) const.
template <class Cell>
concept CarriesFlowValues = requires(const Cell& c, double q, double& a, const typename Cell::Carry& w) {
  { c.template carry<true>(q, q) } -> std::same_as<typename Cell::Carry>;
  { c.areaOf(q) } -> std::same_as<double>;
  { c(q, q, q, q, w, w, q, a) } -> std::same_as<double>;
};

/// Advances q over every row, for a cell that carries its values, with
/// cells taken along diagonals: pass t computes cell j (j = 1..m) of row
/// t − j + 1. Cell j of row r needs Q[j−1] of rows r and r − 1 and Q[j] of
/// row r − 1, all from the two passes before, so the up to m cells of a
/// pass are independent dependency chains that the core overlaps (two rows
/// at once give at most two; row by row, each cell waits on the one before
/// it). Per section j it keeps its latest flow v[j] (q itself) with what
/// the cell reads of it (cv[j]), the flow before (p[j], cp[j]) and the
/// lateral share of the row it is on; a pass goes from j = m down, so each
/// cell reads its upstream neighbour's values before that neighbour moves
/// on. A result below zero is set to zero and counted in *clamps when
/// clamps is not null. Calls finish(outflow) for each row, in row order.
/// (Cheap cells, such as `mc`'s, ran slower this way: their flows in
/// memory cost more than the overlap gains; they go two rows at a time.)
template <CarriesFlowValues Cell, class Finish>
void carriedDiagonals(std::vector<double>& q, std::uint32_t m, Rows& rows, const Cell& cell,
                      std::uint64_t* clamps, Finish&& finish) {
  using Carry = typename Cell::Carry;
  thread_local std::vector<double> work;
  thread_local std::vector<Carry> carried;
  work.resize(2 * (std::size_t{m} + 1));
  carried.resize(2 * (std::size_t{m} + 1));
  double* const v = q.data();
  double* const p = work.data();
  double* const lat = p + m + 1;
  Carry* const cv = carried.data();
  Carry* const cp = cv + m + 1;
  // The starting flows are not new: not counted.
  for (std::uint32_t j = 0; j <= m; ++j) cv[j] = cell.template carry<false>(v[j], cell.areaOf(v[j]));
  const std::size_t count = rows.count();
  for (std::size_t t = 0; t + 1 < count + m; ++t) {
    if (t < count) {
      const Row row = rows.next();
      p[0] = v[0], cp[0] = cv[0];
      v[0] = row.inflow, lat[0] = row.lat;
      cv[0] = cell.template carry<true>(row.inflow, cell.areaOf(row.inflow));
    }
    const std::uint32_t hi = t + 1 < m ? std::uint32_t(t + 1) : m;
    const std::uint32_t lo = t + 1 < count ? 1 : std::uint32_t(t + 2 - count);
    for (std::uint32_t j = hi; j >= lo; --j) {
      double area;
      double next = cell(v[j - 1], p[j - 1], v[j], lat[j - 1], cv[j - 1], cp[j - 1], cv[j].a, area);
      if (clamps && !(next >= 0)) ++*clamps, next = 0.0, area = cell.areaOf(0.0);
      p[j] = v[j], cp[j] = cv[j], v[j] = next, lat[j] = lat[j - 1];
      // The outflow feeds no cell: only its area is read (as Q[m,n]).
      if (j < m) cv[j] = cell.template carry<true>(next, area);
      else cv[j].a = area;
    }
    if (hi == m) finish(v[m]);  // row t − m + 1
  }
}

/// Advances the reach over every row of the run with `cell`; keeps the
/// volume totals and writes the outflow at each output step: along
/// diagonals for a cell that carries its values, else two rows at a time.
/// Either way every cell sees the same inputs as row by row, so the results
/// are those of a row-by-row sweep to the bit. `clamps`: where a carrying
/// cell's results below zero are counted (null: none can occur); other
/// cells come wrapped in sweepReach's own clamp. The cell is taken by
/// value: a local copy lets the compiler keep its parameters in registers,
/// where through a reference it must reload them after every store to q
/// (they might alias).
template <class Cell>
void sweep(std::uint32_t m, std::uint32_t k, std::span<const double> inflow,
           std::span<const double> lateral, double dt, std::vector<double>& q,
           std::vector<double>& out, Totals& tot, Cell cell, std::uint64_t* clamps = nullptr) {
  // s / k once per route rather than twice per row (the same quotients).
  thread_local std::vector<double> fractions;
  fractions.resize(std::size_t{k} + 1);
  for (std::uint32_t i = 0; i <= k; ++i) fractions[i] = double(i) / k;
  Rows rows{inflow, lateral, m, k, 0, 1, fractions.data()};
  const std::size_t count = rows.count();
  const double dts = dt / k;
  double q_out = q[m];
  out[0] = q_out;
  std::size_t out_step = 1;   // the output step of the next row to finish
  std::uint32_t out_sub = 1;  // and its sub-step
  const auto finish = [&](double q_out_new) {
    tot.out += 0.5 * dts * (q_out + q_out_new);
    q_out = q_out_new;
    if (out_sub == k) out[out_step++] = q_out, out_sub = 1;
    else ++out_sub;
  };
  if constexpr (CarriesFlowValues<Cell>) {
    carriedDiagonals(q, m, rows, cell, clamps, finish);
  } else {
    std::size_t r = 0;
    for (; r + 1 < count; r += 2) {
      const Row a = rows.next(), b = rows.next();
      const auto [out_a, out_b] = twoRows(q, m, a, b, cell);
      finish(out_a);
      finish(out_b);
    }
    if (r < count) finish(oneRow(q, m, rows.next(), cell));
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
  if constexpr (CarriesFlowValues<Cell>) {
    sweep(m, k, ctx.inflow, ctx.lateral, ctx.dt_s, ctx.q, ctx.out, ctx.totals, cell,
          negatives == Negatives::CannotOccur ? nullptr : &ctx.numerics.negative_clamps);
  } else if (negatives == Negatives::CannotOccur) {
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
