#include "reachwise/routing/ReachRouter.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <utility>

#include "reachwise/Error.hpp"
#include "reachwise/routing/Peak.hpp"

namespace reachwise::routing {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

void checkSeries(const char* quantity, std::span<const double> s) {
  for (std::size_t i = 0; i < s.size(); ++i)
    if (!(s[i] >= 0) || !std::isfinite(s[i]))
      throw InvalidParameter(quantity, "sample " + std::to_string(i) + " is negative or not finite (" +
                                           std::to_string(s[i]) + ")");
}

/// Forcing of one output step, interpolated linearly to sub-steps.
struct StepForcing {
  double in0, in1, lat0, lat1;
  double inflowAt(double f) const { return in0 + (in1 - in0) * f; }
  double lateralAt(double f) const { return lat0 + (lat1 - lat0) * f; }
};

struct Totals {
  double in = 0, lat = 0, out = 0;
};

/// Storage of a reach with uniform sub-reach parameters, S = Σ K [X I + (1 − X) O].
double linearStorage(const std::vector<double>& q, double k_s, double x) {
  double s = 0;
  for (std::size_t j = 0; j + 1 < q.size(); ++j) s += k_s * (x * q[j] + (1.0 - x) * q[j + 1]);
  return s;
}

void initialState(std::vector<double>& q, std::uint32_t m, double inflow0, double lateral0) {
  // Steady state of the first sample: lateral inflow accumulates linearly.
  q.resize(m + 1);
  for (std::uint32_t j = 0; j <= m; ++j) q[j] = inflow0 + lateral0 * j / m;
}

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

  std::size_t count() const { return (inflow.size() - 1) * k; }
  /// The next row; `ends_step` set when it is a step's last sub-step (its
  /// outflow is the sample at step n + 1).
  const double* fraction;  // fraction[s] = s / k, s = 0..k

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

/// Advances the reach over every row of the run. `cell` gives Q[j+1,n+1]
/// from Q[j,n+1], Q[j,n], Q[j+1,n] and the lateral share (m^3/s); the sweep
/// keeps the volume totals and writes the outflow at each output step.
template <class Cell>
void sweep(std::uint32_t m, std::uint32_t k, std::span<const double> inflow,
           std::span<const double> lateral, double dt, std::vector<double>& q,
           std::vector<double>& out, Totals& tot, Cell&& cell) {
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

/// Constant coefficients on every cell and step (`mc`, `muskingum`).
/// With non-negative coefficients and non-negative forcing no flow can turn
/// negative, so the clamp is only checked when a coefficient is negative.
void routeConstant(const Coefficients& cf, std::uint32_t m, std::uint32_t k,
                   std::span<const double> inflow, std::span<const double> lateral, double dt,
                   std::vector<double>& q, std::vector<double>& out, Totals& tot,
                   std::uint64_t& negative_clamps) {
  const double a = cf.in_new, b = cf.in_old, c = cf.out_old, l = cf.lateral;
  if (cf.nonNegative()) {
    sweep(m, k, inflow, lateral, dt, q, out, tot, [=](double left_new, double left_old, double old, double lat) {
      return a * left_new + b * left_old + c * old + l * lat;
    });
    return;
  }
  sweep(m, k, inflow, lateral, dt, q, out, tot, [&](double left_new, double left_old, double old, double lat) {
    const double v = a * left_new + b * left_old + c * old + l * lat;
    if (v >= 0) return v;
    ++negative_clamps;
    return 0.0;
  });
}

/// The flow sums one variable-parameter cell needs. Each is Q[j,n+1] (the
/// cell upstream, just finished) plus a sum of values known long before, so
/// only one addition per sum waits on the upstream cell (see VpCell::update).
struct CellFlows {
  double for_c, for_d, rest, three_point_sum;
  CellFlows(double left_new, double left_old, double old, double lat)
      : for_c(left_new + (left_old - old + 2.0 * lat)),
        for_d(left_new + (old - left_old)),
        rest((left_old + old) - left_new),
        three_point_sum(left_new + (left_old + old)) {}
};

/// Per-cell parameters of variable-parameter routing.
struct VpCell {
  const hydraulics::RatingTable& table;
  const hydraulics::Section* direct;  // non-null: solve normal depth per cell
  double slope, dx, dts, capacity;
  double dt_over_dx = dts / dx, inv_slope_dx = 1.0 / (slope * dx);
  std::uint64_t x_clamps = 0, surcharge = 0;

  /// C and D at reference flow qr (Ponce & Yevjevich 1978).
  void courantAndReynolds(double qr, double& C, double& D) {
    double c, inv_tc;
    if (direct) {
      const hydraulics::FlowState f = direct->normalFlow(std::max(qr, table.bottomDischarge()));
      c = f.celerity_ms, inv_tc = 1.0 / (f.top_width_m * f.celerity_ms);
    } else {
      table.celerityAndInverseWidthCelerity(qr, c, inv_tc);
    }
    C = c * dt_over_dx;
    D = inv_tc * (qr * inv_slope_dx);  // qr/(S0 Δx) is formed while the table is read
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
  /// Storage with each cell's parameters at the mean of its end flows.
  double storage(const std::vector<double>& q) const {
    double s = 0;
    for (std::size_t j = 0; j + 1 < q.size(); ++j) {
      const double qm = std::max(0.5 * (q[j] + q[j + 1]), table.bottomDischarge());
      double c, t;
      table.celerityAndWidth(qm, c, t);
      const double x = 0.5 * (1.0 - std::min(1.0, qm / (t * slope * c * dx)));
      s += dx / c * (x * q[j] + (1.0 - x) * q[j + 1]);
    }
    return s;
  }
};

void routeVariable(VpCell& cell, Scheme scheme, int iterations, std::uint32_t m, std::uint32_t k,
                   std::span<const double> inflow, std::span<const double> lateral, double dt,
                   std::vector<double>& q, std::vector<double>& out, Totals& tot,
                   std::uint64_t& negative_clamps) {
  // Inlined into the sweep (the compiler kept it a call, three per pair of
  // rows): on short reaches the call's register spills cost as much as the
  // cell.
  sweep(m, k, inflow, lateral, dt, q, out, tot, [&](double left_new, double left_old, double old, double lat)
                                                    __attribute__((always_inline)) {
    const CellFlows f(left_new, left_old, old, lat);
    double C, D;
    // Times 1/3 rather than divided by 3: a division would wait on the chain.
    cell.courantAndReynolds(f.three_point_sum * (1.0 / 3.0), C, D);
    double v = VpCell::update(C, D, f);
    if (scheme == Scheme::FourPoint) {
      for (int it = 0; it < iterations; ++it) {
        cell.courantAndReynolds(0.25 * (f.three_point_sum + std::max(v, 0.0)), C, D);
        const double next = VpCell::update(C, D, f);
        const bool done = std::abs(next - v) <= 1e-10 * std::abs(next);
        v = next;
        if (done) break;
      }
    }
    if (v >= 0) return v;
    ++negative_clamps;
    return 0.0;
  });
}

void finishVolume(VolumeBalance& v, const Totals& t, double s0, double s1) {
  v.inflow_m3 = t.in;
  v.lateral_m3 = t.lat;
  v.outflow_m3 = t.out;
  v.storage_change_m3 = s1 - s0;
  const double entered = t.in + t.lat;
  v.error_pct = entered > 0 ? 100.0 * (entered - t.out - (s1 - s0)) / entered : 0.0;
}

/// The grid for Muskingum–Cunge: chosen, or as forced by the options. With
/// only the sub-reach count forced, the sub-steps follow from C <= 1 + D.
Grid cungeGrid(const RouteOptions& o, double length, double c, double t, double slope, double q,
               double dt) {
  if (o.subreaches == 0 && o.substeps == 0)
    return chooseCungeGrid(length, c, t, slope, q, dt, o.limits);
  Grid g;
  g.subreaches = o.subreaches > 0 ? o.subreaches : chooseCungeGrid(length, c, t, slope, q, dt, o.limits).subreaches;
  const double dx = length / g.subreaches;
  const double d = std::min(1.0, q / (t * slope * c * dx));
  g.substeps = o.substeps > 0 ? o.substeps
                              : static_cast<std::uint32_t>(std::max(1.0, std::ceil(c * dt / (dx * (1.0 + d)))));
  return g;
}

Grid muskingumGrid(const RouteOptions& o, double k_s, double x, double dt) {
  Grid g = chooseMuskingumGrid(k_s, x, dt, o.limits);
  if (o.subreaches > 0) g.subreaches = o.subreaches;
  if (o.substeps > 0) g.substeps = o.substeps;
  if (o.subreaches > 0 || o.substeps > 0) g.compromise = false;
  return g;
}

/// The rating table of a `vpmc` route, rebuilt in `spare`'s storage. Its
/// top is max(1.5 Q_peak, 2 Q_ref) as always; its bottom is a tenth of the
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

ReachRun ReachRouter::route(const ReachSpec& reach, std::span<const double> inflow,
                            std::span<const double> lateral, double dt, const RouteOptions& opt,
                            std::vector<double>& out) {
  if (!(dt > 0) || !std::isfinite(dt)) throw InvalidParameter("dt", "must be a finite step > 0 s");
  if (!(reach.length_m > 0) || !std::isfinite(reach.length_m))
    throw InvalidParameter("length", "must be a finite length > 0 m");
  if (inflow.empty()) throw InvalidParameter("inflow", "has no samples");
  if (!lateral.empty() && lateral.size() != inflow.size())
    throw InvalidParameter("lateral", "must have as many samples as the inflow");
  // One pass forms the total inflow, its range and the smallest top inflow
  // and finds whether any sample is bad; only then do the checks run again
  // sample by sample to name the first bad one.
  const std::size_t n_samples = inflow.size();
  total_.resize(n_samples);
  bool good = true;
  double q_base = inflow[0] + (lateral.empty() ? 0.0 : lateral[0]), q_peak = q_base;
  double q_in_min = inflow[0];
  for (std::size_t i = 0; i < n_samples; ++i) {
    const double in = inflow[i], lat = lateral.empty() ? 0.0 : lateral[i];
    good &= (in >= 0) & (in <= std::numeric_limits<double>::max()) & (lat >= 0) &
            (lat <= std::numeric_limits<double>::max());
    const double t = in + lat;
    total_[i] = t;
    q_base = std::min(q_base, t);
    q_peak = std::max(q_peak, t);
    q_in_min = std::min(q_in_min, in);
  }
  if (!good) {
    checkSeries("inflow", inflow);
    checkSeries("lateral", lateral);
  }
  if (table_) spare_ = std::move(table_);  // keeps its storage for the next vpmc table
  table_.reset();

  const std::size_t n_steps = inflow.size();
  ReachRun run;
  const Peak in_peak = findPeak(total_);
  run.inflow_peak_m3s = in_peak.value;
  run.inflow_peak_index = in_peak.index;
  run.rise_s = riseSamples(total_) * dt;
  const double q_ref = std::isnan(opt.reference_q_m3s) ? q_base + 0.5 * (q_peak - q_base)
                                                       : opt.reference_q_m3s;
  out.assign(n_steps, 0.0);
  ReachNumerics& num = run.numerics;
  num.reference_q_m3s = q_ref;
  if (!(q_peak > 0)) return run;  // a dry reach stays dry

  const hydraulics::Section& sec = reach.section;
  Totals tot;
  double s0 = 0, s1 = 0, sigma_dx = kNan;

  if (opt.method == Method::Muskingum) {
    const double k_s = reach.muskingum_k_s, x = reach.muskingum_x;
    if (!(k_s > 0) || !std::isfinite(k_s)) throw InvalidParameter("muskingum_k_h", "must be > 0");
    if (!(x >= 0 && x <= 0.5)) throw InvalidParameter("muskingum_x", "must lie in [0, 0.5]");
    const Grid g = muskingumGrid(opt, k_s, x, dt);
    const double k_sub = k_s / g.subreaches, dts = dt / g.substeps;
    const Coefficients cf = muskingumCoefficients(k_sub, x, dts);
    num.subreaches = g.subreaches;
    num.substeps = g.substeps;
    num.grid_compromise = g.compromise;
    num.k_s = k_sub;
    num.x = x;
    num.courant = dts / k_sub;  // K = Δx / c, so Δt/K is the Courant number
    num.cell_reynolds = 1.0 - 2.0 * x;
    num.dx_m = reach.length_m / g.subreaches;
    num.celerity_ms = num.dx_m / k_sub;
    num.dt_sub_s = dts;
    initialState(q_, g.subreaches, inflow[0], lateral.empty() ? 0.0 : lateral[0]);
    s0 = linearStorage(q_, k_sub, x);
    routeConstant(cf, g.subreaches, g.substeps, inflow, lateral, dt, q_, out, tot, num.negative_clamps);
    s1 = linearStorage(q_, k_sub, x);
  } else {
    // Parameters (and for `vpmc` the grid) at the reference flow. A pipe
    // asked for more than it carries is evaluated just below its cap, where
    // the celerity is still positive.
    const double q_eval = std::min(q_ref, 0.99 * sec.capacity());
    const hydraulics::FlowState ref = sec.normalFlow(std::max(q_eval, 1e-9));
    const double c = ref.celerity_ms, t = ref.top_width_m, slope = sec.bedSlope();
    const Grid g = cungeGrid(opt, reach.length_m, c, t, slope, q_eval, dt);
    const double dx = reach.length_m / g.subreaches, dts = dt / g.substeps;
    const CungeParameters p = cungeParameters(c, t, slope, q_eval, dx, dts);
    num.subreaches = g.subreaches;
    num.substeps = g.substeps;
    num.grid_compromise = g.compromise || !p.coefficients.nonNegative();
    num.dx_m = dx;
    num.dt_sub_s = dts;
    num.celerity_ms = c;
    num.courant = p.courant;
    num.cell_reynolds = p.cell_reynolds;
    num.x = p.x;
    num.k_s = p.k_s;
    initialState(q_, g.subreaches, inflow[0], lateral.empty() ? 0.0 : lateral[0]);
    if (opt.method == Method::ConstantParameter) {
      if (p.x_clamped) num.x_clamps = 1;
      if (q_peak > sec.capacity()) num.surcharge_cells = 1;
      s0 = linearStorage(q_, p.k_s, p.x);
      routeConstant(p.coefficients, g.subreaches, g.substeps, inflow, lateral, dt, q_, out, tot,
                    num.negative_clamps);
      s1 = linearStorage(q_, p.k_s, p.x);
    } else {
      table_ = ratingTableFor(sec, q_in_min, q_peak, q_ref, opt.table_nodes, spare_);
      VpCell cell{*table_, opt.use_rating_table ? nullptr : &sec, slope, dx, dts, sec.capacity()};
      s0 = cell.storage(q_);
      routeVariable(cell, opt.scheme, opt.four_point_iterations, g.subreaches, g.substeps, inflow,
                    lateral, dt, q_, out, tot, num.negative_clamps);
      s1 = cell.storage(q_);
      num.x_clamps = cell.x_clamps;
      num.surcharge_cells = cell.surcharge;
    }
  }
  // Ponce's ratios for a wave of period 2 t_rise and wavelength c T_w.
  if (run.rise_s > 0 && num.celerity_ms > 0) {
    const double wavelength = num.celerity_ms * 2.0 * run.rise_s;
    sigma_dx = 2.0 * std::numbers::pi * num.dx_m / wavelength;
    const ConvergenceRatios r = ponceConvergenceRatios(num.courant, num.x, sigma_dx);
    num.amplitude_ratio = r.amplitude;
    num.phase_ratio = r.phase;
  }
  finishVolume(run.volume, tot, s0, s1);
  return run;
}

void depthAndVelocityAt(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                        double q, double& depth, double& velocity) {
  if (table) {
    table->depthAndVelocity(q, depth, velocity);
    return;
  }
  const hydraulics::FlowState f = section.normalFlow(std::max(q, 0.0));
  depth = f.depth_m;
  velocity = f.velocity_ms;
}

void depthAndVelocity(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                      std::span<const double> q, std::vector<double>& depth,
                      std::vector<double>& velocity) {
  depth.resize(q.size());
  velocity.resize(q.size());
  for (std::size_t i = 0; i < q.size(); ++i) depthAndVelocityAt(section, table, q[i], depth[i], velocity[i]);
}

}  // namespace reachwise::routing
