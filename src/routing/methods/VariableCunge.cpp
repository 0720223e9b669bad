// `vpmc`: variable-parameter Muskingum–Cunge, C and D recomputed in every
// cell from a rating table (Ponce & Yevjevich 1978, J. Hydraulics Div. ASCE
// 104; four-point scheme: Ponce & Chaganti 1994, J. Hydrology 162), on the
// grid chosen at the reference flow.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <optional>
#include <utility>

#include "CungeReference.hpp"
#include "Methods.hpp"
#include "reachwise/hydraulics/RatingTable.hpp"
#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::routing::methods {

namespace {

/// The flow sums one variable-parameter cell needs. Each is Q[j,n+1] (the
/// cell upstream, just finished) plus a sum of values known long before, so
/// only one addition per sum waits on the upstream cell (see
/// VariableCell::update).
struct CellFlows {
  double for_c, for_d, rest, three_point_sum;
  CellFlows(double left_new, double left_old, double old, double lat)
      : for_c(left_new + (left_old - old + 2.0 * lat)),
        for_d(left_new + (old - left_old)),
        rest((left_old + old) - left_new),
        three_point_sum(left_new + (left_old + old)) {}
};

/// The cell of variable-parameter routing: C and D at the cell's own
/// reference flow, three-point or four-point (iterated).
struct VariableCell {
  const hydraulics::RatingTable& table;
  const hydraulics::Section* direct;  // non-null: solve normal depth per cell
  double slope, dx, dts, capacity;
  Scheme scheme;
  int iterations;
  std::uint64_t& x_clamps;   // cells where D > 1 was taken as 1
  std::uint64_t& surcharge;  // cells above the pipe's capacity
  double dt_over_dx = dts / dx, inv_slope_dx = 1.0 / (slope * dx);

  /// C and D at reference flow qr (Ponce & Yevjevich 1978).
  void courantAndReynolds(double qr, double& C, double& D) const {
    double c, inv_tc;
    if (direct) {
      const hydraulics::FlowState f = direct->normalFlow(std::max(qr, table.bottomDischarge()));
      c = f.celerity_ms, inv_tc = 1.0 / (f.top_width_m * f.celerity_ms);
    } else {
      table.celerityAndInverseWidthCelerity(qr, c, inv_tc);
    }
    C = c * dt_over_dx;
    D = cellDiffusionRatioFactored(qr, inv_tc, inv_slope_dx);  // qr/(S0 Δx) is formed while the table is read
    if (D > 1.0) {
      D = 1.0;  // X < 0 raised to 0
      ++x_clamps;
    }
    if (qr > capacity) ++surcharge;
  }
  static double update(double C, double D, const CellFlows& f) {
    // The scheme's numerator (−1 + C + D) Q[j,n+1] + (1 + C − D) Q[j,n]
    // + (1 − C + D) Q[j+1,n] + 2 C qL Δx regrouped by C and D, so the sums
    // of flows are formed while C and D are still being looked up and only
    // two products, two sums and the division wait for them.
    return (C * f.for_c + f.rest + D * f.for_d) / (1.0 + C + D);
  }
  // Inlined into the sweep (the compiler kept it a call, three per pair of
  // rows): on short reaches the call's register spills cost as much as the
  // cell.
  __attribute__((always_inline)) double operator()(double left_new, double left_old, double old,
                                                   double lat) const {
    const CellFlows f(left_new, left_old, old, lat);
    double C, D;
    // Times 1/3 rather than divided by 3: a division would wait on the chain.
    courantAndReynolds(f.three_point_sum * (1.0 / 3.0), C, D);
    double v = update(C, D, f);
    if (scheme == Scheme::FourPoint) {
      for (int it = 0; it < iterations; ++it) {
        courantAndReynolds(0.25 * (f.three_point_sum + std::max(v, 0.0)), C, D);
        const double next = update(C, D, f);
        const bool done = std::abs(next - v) <= 1e-10 * std::abs(next);
        v = next;
        if (done) break;
      }
    }
    return v;
  }
  /// Storage with each cell's parameters at the mean of its end flows.
  double storage(const std::vector<double>& q) const {
    double s = 0;
    for (std::size_t j = 0; j + 1 < q.size(); ++j) {
      const double qm = std::max(0.5 * (q[j] + q[j + 1]), table.bottomDischarge());
      double c, t;
      table.celerityAndWidth(qm, c, t);
      const double x = 0.5 * (1.0 - std::min(1.0, cellDiffusionRatio(qm, t, slope, c, dx)));
      s += dx / c * (x * q[j] + (1.0 - x) * q[j + 1]);
    }
    return s;
  }
};

/// The rating table of a route, rebuilt in `spare`'s storage. Its top is
/// max(1.5 Q_peak, 2 Q_ref) as always; its bottom is a tenth of the
/// smallest top inflow (where flows in the reach can reach: lateral inflow
/// only adds), but never below 1e-5 of the top: the flows a reach sees span
/// a decade or three, not five, so most of a five-decade table went unread.
/// The node spacing in ln Q stays that of `nodes` over five decades, so the
/// table is as accurate where it is read and costs fewer solves.
hydraulics::RatingTable ratingTableFor(const hydraulics::Section& sec, double q_in_min,
                                       double q_peak, double q_ref, std::size_t nodes,
                                       std::optional<hydraulics::RatingTable>& spare) {
  const double q_hi = std::max(1.5 * q_peak, 2.0 * q_ref);
  const double q_lo = std::max(q_hi * 1e-5, 0.1 * q_in_min);
  const double decades = std::log10(q_hi / q_lo);
  // (− 1e-9: a full five-decade table keeps exactly `nodes`.)
  const auto scaled = static_cast<std::size_t>(std::ceil(static_cast<double>(nodes) * decades / 5.0 - 1e-9));
  const std::size_t n = std::min(nodes, std::max<std::size_t>(16, scaled));  // nodes < 3 still throws
  if (!spare) return hydraulics::RatingTable(sec, q_lo, q_hi, n);
  hydraulics::RatingTable t = std::move(*spare);
  spare.reset();
  t.rebuild(sec, q_lo, q_hi, n);
  return t;
}

}  // namespace

void variableCunge(RouteContext& ctx) {
  const CungeReference ref = cungeAtReference(ctx);
  const hydraulics::Section& sec = ctx.reach.section;
  const RouteOptions& o = ctx.options;
  ctx.table = ratingTableFor(sec, ctx.q_in_min_m3s, ctx.q_peak_m3s, ctx.q_ref_m3s, o.table_nodes, ctx.spare);
  VariableCell cell{*ctx.table, o.use_rating_table ? nullptr : &sec, sec.bedSlope(), ref.dx_m, ref.dt_sub_s,
                    sec.capacity(), o.scheme, o.four_point_iterations, ctx.numerics.x_clamps,
                    ctx.numerics.surcharge_cells};
  sweepReach(ctx, cell, Negatives::ClampAndCount);
}

}  // namespace reachwise::routing::methods
