// `vpmc`: variable-parameter Muskingum–Cunge, C and D recomputed in every
// cell from a rating table (Ponce & Yevjevich 1978, J. Hydraulics Div. ASCE
// 104), on the grid chosen at the reference flow. The default (three-point)
// cell is written on the storage of the sub-reach, Δx [X A(I) + (1 − X) A(O)]
// with A the area of uniform flow, so it conserves volume to round-off
// (mass-conservative variable-parameter Muskingum–Cunge: Todini 2007, HESS
// 11, 1645–1659, "A mass conservative and water storage consistent variable
// parameter Muskingum-Cunge approach"; our form on the area rather than his
// on K = Δx/c, see ConservativeCell and docs/methods.md §4). The iterated
// four-point option keeps the discharge form (Ponce & Chaganti 1994,
// J. Hydrology 162).

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
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
  std::uint64_t& x_clamps;   // cells where D > 1 + C was taken as 1 + C
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
    if (D > 1.0 + C) {
      D = 1.0 + C;  // X < −C/2 raised to −C/2, where a coefficient would go negative
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
      const double x = 0.5 * (1.0 - std::min(1.0 + c * dts / dx, cellDiffusionRatio(qm, t, slope, c, dx)));
      s += dx / c * (x * q[j] + (1.0 - x) * q[j + 1]);
    }
    return s;
  }
};

/// Cross-section area against discharge for the conservative cell: A(Q) of
/// uniform flow, linear between the edges of cells that are read straight
/// off the bits of Q (the exponent and the top kBits mantissa bits, 2^kBits
/// cells per octave, as the rating table's dense grid), A = a0 + a1 Q in a
/// cell. Built from the rating table's depth (A = A(y(Q)), the section's own
/// area), so it costs no normal-depth solve inside the table's range. A
/// two-stage section's A(Q) has a kink at bank-full (dA/dQ = 1/c jumps
/// several-fold): the cell holding it is split there into two, the upper
/// one appended after the others, so the kink is kept and not spread over
/// a cell (which made the flows just below bank-full travel late).
class AreaTable {
public:
  static constexpr int kBits = 5;
  void build(const hydraulics::RatingTable& table, const hydraulics::Section& sec) {
    const double lo = table.bottomDischarge(), hi = table.topDischarge();
    key0_ = key(lo);
    const std::int64_t key1 = key(hi) + 1;
    q_lo_ = lo, q_hi_ = hi;
    cells_.resize(static_cast<std::size_t>(key1 - key0_ + 1));
    double e0 = lo, a_e0 = areaAt(table, sec, lo);
    for (std::int64_t k = key0_; k <= key1; ++k) {
      const double e1 = std::max(start(k + 1), e0 * (1 + 1e-12));
      const double a_e1 = areaAt(table, sec, e1);
      cells_[static_cast<std::size_t>(k - key0_)] = chord(e0, a_e0, e1, a_e1);
      e0 = e1, a_e0 = a_e1;
    }
    split_key_ = -1;
    if (sec.shape() != hydraulics::Shape::TwoStage) return;
    const double q_bank = sec.discharge(sec.bankDepth());
    const std::int64_t kb = key(q_bank);
    if (!(q_bank > lo && q_bank < hi) || start(kb) == q_bank) return;  // outside, or already an edge
    const double c0 = std::max(start(kb), lo), c1 = start(kb + 1), a_bank = sec.area(sec.bankDepth());
    Cell& below = cells_[static_cast<std::size_t>(kb - key0_)];
    const double a_c0 = below.a0 + below.a1 * c0, a_c1 = below.a0 + below.a1 * c1;
    below = chord(c0, a_c0, q_bank, a_bank);
    cells_.push_back(chord(q_bank, a_bank, c1, a_c1));
    split_key_ = kb, split_q_ = q_bank, split_index_ = cells_.size() - 1;
  }
  struct Cell {
    double a0, a1;
  };
  /// The cell holding q (held at the table's ends).
  const Cell& at(double q) const { return cells_[index(q)]; }
  std::size_t index(double q) const {
    if (!(q > q_lo_)) q = q_lo_;
    if (q > q_hi_) q = q_hi_;
    const std::int64_t k = key(q);
    if (k == split_key_ && q >= split_q_) [[unlikely]]
      return split_index_;
    return static_cast<std::size_t>(k - key0_);
  }
  const Cell& cell(std::size_t i) const { return cells_[i]; }
  double area(double q) const {
    const Cell& c = at(q);
    return c.a0 + c.a1 * q;
  }

private:
  static Cell chord(double q0, double a_q0, double q1, double a_q1) {
    const double slope = (a_q1 - a_q0) / (q1 - q0);
    return {a_q0 - slope * q0, slope};
  }
  static std::int64_t key(double q) {
    return static_cast<std::int64_t>(std::bit_cast<std::uint64_t>(q) >> (52 - kBits));
  }
  static double start(std::int64_t k) {
    return std::bit_cast<double>(static_cast<std::uint64_t>(k) << (52 - kBits));
  }
  static double areaAt(const hydraulics::RatingTable& table, const hydraulics::Section& sec, double q) {
    double y, v;
    table.depthAndVelocity(q, y, v);
    return sec.area(y);
  }
  std::vector<Cell> cells_;
  std::int64_t key0_ = 0, split_key_ = -1;
  double q_lo_ = 1, q_hi_ = 1, split_q_ = 0;
  std::size_t split_index_ = 0;
};

/// The conservative variable-parameter cell (see docs/methods.md §4): the
/// storage of a sub-reach is Δx [X A(I) + (1 − X) A(O)], with A the area of
/// uniform flow and X = (1 − D)/2 at the inflow end's flow at that time
/// level, and it changes over a sub-step by exactly the trapezoidal inflow
/// minus outflow (plus the lateral inflow):
///   Δx [X* A(I*) + (1 − X*) A(O*)] − Δx [X' A(I') + (1 − X') A(O')]
///     = Δt/2 (I* + I' − O' − O*) + Δt q_L Δx.
/// Linearised about one flow (A = Q/c) it is Cunge's scheme (Cunge 1969);
/// written on the area it conserves volume whatever C and D do, the idea of
/// Todini (2007), whose coefficients are written on K = Δx/c instead (from
/// memory). D is kept in [D_min, 1 + C] (lowestCellDiffusion), so that
/// every linearised coefficient is non-negative, in_new down to
/// kFlatInNewFloor on a flat reach (positivity; see docs/methods.md).
struct ConservativeCell {
  const hydraulics::RatingTable& table;
  const AreaTable& area;
  double slope, dx, dts, capacity;
  double in_new_bound;  // inNewBound(0 or, on a flat reach, kFlatInNewFloor)
  std::uint64_t& x_clamps;
  std::uint64_t& surcharge;
  double dt_over_dx = dts / dx, inv_slope_dx = 1.0 / (slope * dx), half_dt = 0.5 * dts;

  /// X at flow q (Cunge 1969), with D held in [D_min, 1 + C].
  /// `Count`: count a clamped D and a surcharged flow (once per cell
  /// update, at its new time level).
  template <bool Count>
  double weight(double q) const {
    double c, inv_tc;
    table.celerityAndInverseWidthCelerity(std::max(q, table.bottomDischarge()), c, inv_tc);
    const double C = c * dt_over_dx;
    double D = cellDiffusionRatioFactored(q, inv_tc, inv_slope_dx);
    if (D > 1.0 + C) {  // X < −C/2: the channel diffuses more than the cell can
      D = 1.0 + C;
      if constexpr (Count) ++x_clamps;
    }
    // Raising D to its lowest for positivity adds diffusion; it is not a clamp.
    const double d_min = lowestCellDiffusion(C, in_new_bound);
    if (D < d_min) D = d_min;
    if constexpr (Count)
      if (q > capacity) ++surcharge;
    return 0.5 * (1.0 - D);
  }
  /// What the cell reads of a flow: its weight X and its area. The sweep
  /// carries them with the flows (CarriesFlowValues): one evaluation per
  /// flow instead of one per cell that reads it, and the area of a cell's
  /// result comes from the solve's own area cell.
  struct Carry {
    double x, a;
  };
  template <bool Count>
  Carry carry(double q, double area_q) const {
    return {weight<Count>(q), area_q};
  }
  double areaOf(double q) const { return area.area(q); }
  /// O* of the cell from I*, I', O' and the lateral share, with what it
  /// reads of I*, I' and O' given; sets `area_out` to A(O*).
  double operator()(double left_new, double left_old, double old, double lat, const Carry& in_new,
                    const Carry& in_old, double area_old, double& area_out) const {
    const double x_old = in_old.x, x_new = in_new.x;
    const double r = dx * (x_old * in_old.a + (1.0 - x_old) * area_old - x_new * in_new.a) +
                     half_dt * (left_new + left_old - old) + dts * lat;
    const double alpha = (1.0 - x_new) * dx;
    // α A(O) + Δt/2 O = r is increasing in O: solve it cell by cell of the
    // area table, starting from the cell of the old outflow moved by the
    // change of the inflow (the cell where it lands most often while a wave
    // passes; the start does not change the solution, only how many cells
    // are tried before it).
    std::size_t i = area.index(old + (left_new - left_old));
    for (int it = 0;; ++it) {
      const AreaTable::Cell& c = area.cell(i);
      const double o = (r - alpha * c.a0) / (alpha * c.a1 + half_dt);
      const std::size_t j = area.index(o);
      if (j == i) {
        area_out = c.a0 + c.a1 * o;  // A(o), the cell it lies in
        return o;
      }
      if (it == 63) {
        area_out = area.area(o);
        return o;
      }
      i = j;
    }
  }
  double storage(const std::vector<double>& q) const {
    double s = 0;
    for (std::size_t j = 0; j + 1 < q.size(); ++j) {
      const double x = weight<false>(q[j]);
      s += dx * (x * area.area(q[j]) + (1.0 - x) * area.area(q[j + 1]));
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
/// With a saved state (ctx.start) its table instead (the same range and
/// nodes as the run that saved it) when this run's flows lie within it,
/// else a table over both ranges. The range and nodes go to ctx.
hydraulics::RatingTable ratingTableFor(RouteContext& ctx, const hydraulics::Section& sec, double q_in_min,
                                       double q_peak, double q_ref, std::size_t nodes,
                                       std::optional<hydraulics::RatingTable>& spare) {
  double q_hi = std::max(1.5 * q_peak, 2.0 * q_ref);
  double q_lo = std::max(q_hi * 1e-5, 0.1 * q_in_min);
  if (ctx.start) {
    // The saved table while this run's flows lie within it (then the run
    // computes what an unbroken run would); else the union of both ranges.
    const ReachState& st = *ctx.start;
    if (q_in_min >= st.table_min_q_m3s && q_peak <= st.table_max_q_m3s) {
      ctx.table_min_q_m3s = st.table_min_q_m3s;
      ctx.table_max_q_m3s = st.table_max_q_m3s;
      ctx.table_nodes = st.table_nodes;
      if (!spare) return hydraulics::RatingTable(sec, st.table_min_q_m3s, st.table_max_q_m3s, st.table_nodes);
      hydraulics::RatingTable t = std::move(*spare);
      spare.reset();
      t.rebuild(sec, st.table_min_q_m3s, st.table_max_q_m3s, st.table_nodes);
      return t;
    }
    q_lo = std::min(q_lo, st.table_min_q_m3s);
    q_hi = std::max(q_hi, st.table_max_q_m3s);
  }
  const double decades = std::log10(q_hi / q_lo);
  // (− 1e-9: a full five-decade table keeps exactly `nodes`.)
  const auto scaled = static_cast<std::size_t>(std::ceil(static_cast<double>(nodes) * decades / 5.0 - 1e-9));
  const std::size_t n = std::min(nodes, std::max<std::size_t>(16, scaled));  // nodes < 3 still throws
  ctx.table_min_q_m3s = q_lo;
  ctx.table_max_q_m3s = q_hi;
  ctx.table_nodes = static_cast<std::uint32_t>(n);
  if (!spare) return hydraulics::RatingTable(sec, q_lo, q_hi, n);
  hydraulics::RatingTable t = std::move(*spare);
  spare.reset();
  t.rebuild(sec, q_lo, q_hi, n);
  return t;
}

/// Celerity and diffusion length at kSamples flows evenly over the range
/// that matters for the peak, [Q_ref, Q_peak].
struct FlowSamples {
  static constexpr int kSamples = 33;
  double c[kSamples], ell[kSamples];
  FlowSamples(const RouteContext& ctx, const hydraulics::RatingTable& table, double slope) {
    const double q0 = std::max(ctx.q_ref_m3s, table.bottomDischarge()), q1 = std::max(ctx.q_peak_m3s, q0);
    for (int i = 0; i < kSamples; ++i) {
      const double q = q0 + (q1 - q0) * i / (kSamples - 1);
      double t;
      table.celerityAndWidth(q, c[i], t);
      ell[i] = diffusionLength(q, t, slope, c[i]);
    }
  }
  bool celerityVariesBy(double factor) const {
    const auto [lo, hi] = std::minmax_element(c, c + kSamples);
    return *hi >= factor * *lo;
  }
};

/// The cell's diffusion length against the channel's ℓ on sub-reaches of
/// Δx when the wave moves ct in a sub-step: the cell diffuses c Δx D'/2
/// with D' = ℓ/Δx held in [D_min, 1 + C] (D_min Δx = max(ct − Δx,
/// β Δx − ct), β = in_new_bound), so the mismatch is ℓ − Δx − ct where
/// D > 1 + C (too little), D_min Δx − ℓ where D < D_min (too much), and 0
/// in between.
double diffusionMismatch(double dx, double ct, double ell, double in_new_bound) {
  return std::max({0.0, ell - dx - ct, lowestCellDiffusion(ct / dx, in_new_bound) * dx - ell});
}

/// The grid of the conservative cell over the range of flows that matter
/// for the peak, [Q_ref, Q_peak] (docs/methods.md §4). At flow q the
/// relative mismatch of the cell's diffusion is diffusionMismatch / ℓ.
/// Where the celerity varies by less than a factor kCelerityRange over the
/// range, the grid of the reference flow is kept (it meets the targets on
/// the accuracy matrix, and refining it cost 2.5 x on the short-reach
/// benchmark). Otherwise (the drop at a bank, a pipe near its crown) the
/// grid with the smallest worst mismatch over the range is taken, among
/// those costing at most kRangeGridCost times the reference grid (m × k);
/// of grids within 0.01 of the smallest, the cheapest.
constexpr double kCelerityRange = 2.0, kRangeGridCost = 16.0;

Grid rangeGrid(const RouteContext& ctx, const FlowSamples& s, Grid g0, double in_new_bound) {
  const double length = ctx.reach.length_m;
  const auto worst = [&](double dx, double dt) {
    double e = 0;
    for (int i = 0; i < FlowSamples::kSamples; ++i)
      e = std::max(e, diffusionMismatch(dx, s.c[i] * dt, s.ell[i], in_new_bound) / s.ell[i]);
    return e;
  };
  // Each mismatch is a convex function of Δx (linear, or the maximum of two
  // linear pieces), so their maximum is too, and along m = L/Δx it falls,
  // then rises: per sub-step count a bisection on its slope finds the best m,
  // and a second one the fewest sub-reaches within 0.01 of it.
  const GridLimits& lim = ctx.options.limits;
  const double budget = kRangeGridCost * g0.subreaches * g0.substeps;
  Grid best = g0;
  double best_e = worst(length / g0.subreaches, ctx.dt_s / g0.substeps), best_cost = g0.subreaches * g0.substeps;
  for (std::uint32_t k = 1; k <= lim.max_substeps && k <= budget; ++k) {
    const double dt = ctx.dt_s / k;
    const auto e = [&](std::uint32_t m) { return worst(length / m, dt); };
    std::uint32_t lo = 1, hi = static_cast<std::uint32_t>(std::min<double>(lim.max_subreaches, budget / k));
    if (hi < 1) break;
    while (lo < hi) {  // the first m with e(m) <= e(m + 1)
      const std::uint32_t mid = lo + (hi - lo) / 2;
      if (e(mid) <= e(mid + 1)) hi = mid; else lo = mid + 1;
    }
    const double e_min = e(lo);
    std::uint32_t first = 1, last = lo;
    while (first < last) {  // the fewest sub-reaches within 0.01 of e_min
      const std::uint32_t mid = first + (last - first) / 2;
      if (e(mid) < e_min + 0.01) last = mid; else first = mid + 1;
    }
    for (const std::uint32_t m : {first, lo}) {
      const double em = e(m), cost = double(m) * k;
      if (em < best_e - 0.01 || (em < best_e + 0.01 && cost < best_cost)) {
        if (em < best_e) best_e = em;
        best_cost = cost, best.subreaches = m, best.substeps = k;
      }
    }
  }
  return best;
}

/// A cheaper grid than g0 for the conservative cell where the wave crosses
/// sub-reaches in about a sub-step (docs/methods.md §4, "Coarser grids on
/// quick reaches"). With a diffusion length ℓ far below the distance the
/// wave moves in a sub-step, the band of Δx that matches the channel's
/// diffusion, |ℓ − cΔt_sub| <= Δx <= ℓ + cΔt_sub, is narrow, and g0 takes
/// many sub-reaches and sub-steps to land in it. Here, at each sampled flow,
/// the mismatch (diffusionMismatch) may exceed g0's own by
/// budget × c × t_rise: the extra diffusivity is then at most
/// budget c² t_rise / 2, which widens a wave's spread in time, σ², by at
/// most budget × t_rise per unit of travel time (σ² = 2 ν L / c³ for a
/// diffusivity ν over a length L), however the reaches of a path are cut.
/// Mismatch <= b is the band widened by b, Δx ∈ [|ℓ − ct| − b,
/// (ct + ℓ + b)/β], so for each sub-step count the fewest sub-reaches follow
/// in closed form; the cheapest grid (m × k) is taken.
Grid economyGrid(const RouteContext& ctx, const FlowSamples& s, Grid g0, double in_new_bound, double budget) {
  constexpr int n = FlowSamples::kSamples;
  const double length = ctx.reach.length_m, dt = ctx.dt_s;
  double allowed[n];
  for (int i = 0; i < n; ++i)
    allowed[i] = diffusionMismatch(length / g0.subreaches, s.c[i] * dt / g0.substeps, s.ell[i], in_new_bound) +
                 budget * s.c[i] * ctx.rise_s;
  const GridLimits& lim = ctx.options.limits;
  Grid best = g0;
  double best_cost = double(g0.subreaches) * g0.substeps;
  for (std::uint32_t k = 1; k <= lim.max_substeps && k < best_cost; ++k) {
    double lo = 0, hi = std::numeric_limits<double>::infinity();
    for (int i = 0; i < n; ++i) {
      const double ct = s.c[i] * dt / k;
      lo = std::max(lo, std::abs(s.ell[i] - ct) - allowed[i]);
      hi = std::min(hi, (ct + s.ell[i] + allowed[i]) / in_new_bound);
    }
    const double m = std::max(1.0, std::ceil(length / hi * (1 - 1e-12)));
    if (m > lim.max_subreaches || length / m < lo * (1 - 1e-12)) continue;
    if (m * k < best_cost) best_cost = m * k, best.subreaches = static_cast<std::uint32_t>(m), best.substeps = k;
  }
  return best;
}

}  // namespace

void variableCunge(RouteContext& ctx) {
  CungeReference ref = cungeAtReference(ctx);
  const hydraulics::Section& sec = ctx.reach.section;
  const RouteOptions& o = ctx.options;
  ctx.table = ratingTableFor(ctx, sec, ctx.q_in_min_m3s, ctx.q_peak_m3s, ctx.q_ref_m3s, o.table_nodes, ctx.spare);
  // The conservative cell reads the tables; the direct-solve option (a
  // check of the table) and the four-point option keep the discharge form.
  if (o.scheme == Scheme::ThreePoint && o.use_rating_table) {
    const double in_new_bound = inNewBound(ref.flat ? kFlatInNewFloor : 0.0);
    thread_local AreaTable area;
    area.build(*ctx.table, sec);
    if (o.subreaches == 0 && o.substeps == 0) {
      Grid g0;
      g0.subreaches = ctx.numerics.subreaches;
      g0.substeps = ctx.numerics.substeps;
      const FlowSamples samples(ctx, *ctx.table, sec.bedSlope());
      Grid g = g0;
      if (samples.celerityVariesBy(kCelerityRange))
        g = rangeGrid(ctx, samples, g0, in_new_bound);
      else if (!ref.flat && o.grid_spread_budget > 0 && ctx.rise_s > 0)
        g = economyGrid(ctx, samples, g0, in_new_bound, o.grid_spread_budget);
      // Report the grid used, with the parameters at the reference flow on it.
      if (g.subreaches != g0.subreaches || g.substeps != g0.substeps) useGrid(ctx, ref, g);
    }
    ConservativeCell cell{*ctx.table, area, sec.bedSlope(), ref.dx_m, ref.dt_sub_s, sec.capacity(), in_new_bound,
                          ctx.numerics.x_clamps, ctx.numerics.surcharge_cells};
    sweepReach(ctx, cell, Negatives::ClampAndCount);
    return;
  }
  VariableCell cell{*ctx.table, o.use_rating_table ? nullptr : &sec, sec.bedSlope(), ref.dx_m, ref.dt_sub_s,
                    sec.capacity(), o.scheme, o.four_point_iterations, ctx.numerics.x_clamps,
                    ctx.numerics.surcharge_cells};
  sweepReach(ctx, cell, Negatives::ClampAndCount);
}

}  // namespace reachwise::routing::methods
