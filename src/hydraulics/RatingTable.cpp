#include "reachwise/hydraulics/RatingTable.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "reachwise/Error.hpp"

namespace reachwise::hydraulics {

namespace {

/// A pipe's table stops just below capacity: there dQ/dy -> 0 and the
/// celerity falls steeply to zero, which no interpolant in ln Q follows.
constexpr double kPipeTableTop = 0.995;

/// Shape-preserving derivatives for data on a uniform grid of spacing h:
/// interior points use the weighted harmonic mean of the neighbouring
/// secants, zero at local extrema (Fritsch & Butland 1984, *SIAM J. Sci.
/// Stat. Comput.* 5(2), 300–304); end points use the non-centred three-point
/// formula limited as in Fritsch & Carlson (1980).
void monotoneSlopes(const std::vector<double>& f, double h, std::vector<double>& d,
                    std::vector<double>& delta) {
  const std::size_t n = f.size();
  d.assign(n, 0.0);
  if (n < 2) return;
  delta.resize(n - 1);
  for (std::size_t k = 0; k + 1 < n; ++k) delta[k] = (f[k + 1] - f[k]) / h;
  if (n == 2) {
    d[0] = d[1] = delta[0];
    return;
  }
  for (std::size_t k = 1; k + 1 < n; ++k) {
    const double a = delta[k - 1], b = delta[k];
    d[k] = (a * b <= 0) ? 0.0 : 2.0 / (1.0 / a + 1.0 / b);
  }
  auto endSlope = [](double d0, double d1) {
    double s = 0.5 * (3.0 * d0 - d1);
    if (s * d0 <= 0) return 0.0;
    if (d0 * d1 <= 0 && std::abs(s) > 3.0 * std::abs(d0)) return 3.0 * d0;
    return s;
  };
  d[0] = endSlope(delta[0], delta[1]);
  d[n - 1] = endSlope(delta[n - 2], delta[n - 3]);
}

/// Work arrays of one segment's build, kept per thread so building a table
/// per reach does not allocate once they have grown.
struct SegmentScratch {
  std::vector<double> c, w, g, y, v, dc, dw, dg, dy, dv, delta;
};
SegmentScratch& segmentScratch() {
  thread_local SegmentScratch scratch;
  return scratch;
}

}  // namespace

RatingTable::RatingTable(const Section& section, double q_min, double q_max, std::size_t nodes)
    : section_(section) {
  rebuild(section, q_min, q_max, nodes);
}

void RatingTable::rebuild(const Section& section, double q_min, double q_max, std::size_t nodes) {
  if (!(q_min > 0) || !std::isfinite(q_min))
    throw InvalidParameter("rating_table.q_min", "must be a finite discharge > 0");
  const bool pipe = section.shape() == Shape::Circle;
  if (pipe) q_max = std::min(q_max, kPipeTableTop * section.capacity());
  if (!(q_max > q_min) || !std::isfinite(q_max))
    throw InvalidParameter("rating_table.q_max",
                           "must be finite and above q_min (and below a pipe's capacity)");
  if (nodes < 3) throw InvalidParameter("rating_table.nodes", "must be >= 3");
  section_ = section;
  nodes_.clear();
  linear_cells_.clear();
  seg_[0] = seg_[1] = Segment{};
  linear_[0] = linear_[1] = LinearSegment{};
  segments_ = 1;
  q_break_ = 0;
  q_linear_break_ = 0;
  q_lo_ = q_min;
  q_hi_ = q_max;
  nodes_.reserve(2 * nodes);

  // Second segment: above bank-full for a two-stage section, above half
  // capacity for a pipe (see the header for why).
  double q_break = 0, shift = 0, sign = 1;
  if (section.shape() == Shape::TwoStage) {
    q_break = section.discharge(section.bankDepth());
    shift = q_break * (1.0 - 1e-7);
  } else if (pipe) {
    q_break = 0.5 * section.capacity();
    shift = section.capacity();
    sign = -1;
  }
  const int above = section.shape() == Shape::TwoStage ? 1 : 0;
  if (q_break > q_min && q_break < q_max) {
    addSegment(section, q_min, q_break, nodes, 0.0, 1.0, -above, 0);
    addSegment(section, q_break, q_max, nodes, shift, sign, above, 1);
    q_break_ = q_break;
  } else if (q_break > 0 && q_min >= q_break) {
    addSegment(section, q_min, q_max, nodes, shift, sign, above, 0);
  } else {
    addSegment(section, q_min, q_max, nodes, 0.0, 1.0, -above, 0);
  }
  buildLinearGrid();
}

void RatingTable::buildLinearGrid() {
  const auto range = [](const Segment& s, double q0, double q1) {
    const double a0 = s.sign * (q0 - s.shift), a1 = s.sign * (q1 - s.shift);
    return std::pair<double, double>{std::min(a0, a1), std::max(a0, a1)};
  };
  if (segments_ == 2) {
    addLinearSegment(seg_[0], q_lo_, q_break_, linear_[0]);
    const auto [a0, a1] = range(seg_[1], q_break_, q_hi_);
    addLinearSegment(seg_[1], a0, a1, linear_[1]);
    q_linear_break_ = q_break_;
  } else if (seg_[0].shift == 0 && seg_[0].sign == 1) {
    addLinearSegment(seg_[0], q_lo_, q_hi_, linear_[0]);
    linear_[1] = linear_[0];  // reached only by q = +inf, and correct for it
    q_linear_break_ = std::numeric_limits<double>::infinity();
  } else {  // the whole table lies beyond the singular point
    const auto [a0, a1] = range(seg_[0], q_lo_, q_hi_);
    addLinearSegment(seg_[0], a0, a1, linear_[1]);
    linear_[0] = linear_[1];  // reached only by NaN, and memory-safe for it
    q_linear_break_ = -std::numeric_limits<double>::infinity();
  }
}

/// Cells for a in [a_lo, a_hi] (a_lo > 0): one per key, each the chord of
/// the Hermite interpolant between the cell's edges, clipped to the range.
/// The values come from the cubic rather than from new normal-depth solves
/// so a table stays cheap to build (one per reach and run); the tests bound
/// the sum of both interpolation errors against the direct solve.
void RatingTable::addLinearSegment(const Segment& s, double a_lo, double a_hi, LinearSegment& out) {
  out.shift = s.shift;
  out.sign = s.sign;
  out.a_lo = a_lo;
  out.a_hi = a_hi;
  out.key0 = linearKey(a_lo);
  out.first = linear_cells_.size();
  linear_cells_.reserve(out.first + static_cast<std::size_t>(linearKey(a_hi) - out.key0) + 1);
  double left = a_lo, c_left, g_left;
  hermiteCelerityAndG(s, left, c_left, g_left);
  for (std::int64_t key = out.key0; key <= linearKey(a_hi); ++key) {
    const double right = std::min(a_hi, linearKeyStart(key + 1));
    double c_right, g_right;
    hermiteCelerityAndG(s, right, c_right, g_right);
    const double inv_width = right > left ? 1.0 / (right - left) : 0.0;  // 0: a one-point cell
    const double c1 = (c_right - c_left) * inv_width, g1 = (g_right - g_left) * inv_width;
    linear_cells_.push_back(LinearCell{c_left - c1 * left, c1, g_left - g1 * left, g1});
    left = right, c_left = c_right, g_left = g_right;
  }
}

void RatingTable::hermiteCelerityAndG(const Segment& s, double a, double& celerity_ms,
                                      double& inv_tc) const {
  const Cell c = cellAt(s, (s.sign * fastLog(a) - s.u0) * s.inv_h);
  celerity_ms = hermite(c.t, c.h, c.lo->c, c.lo->dc, c.lo[1].c, c.lo[1].dc);
  inv_tc = hermite(c.t, c.h, c.lo->g, c.lo->dg, c.lo[1].g, c.lo[1].dg);
}

void RatingTable::addSegment(const Section& section, double q0, double q1, std::size_t count,
                             double shift, double sign, int bank_side, int segment) {
  Segment& s = seg_[segment];
  segments_ = segment + 1;
  s.shift = shift;
  s.sign = sign;
  s.u0 = sign * std::log(sign * (q0 - shift));
  s.h = (sign * std::log(sign * (q1 - shift)) - s.u0) / static_cast<double>(count - 1);
  s.inv_h = 1.0 / s.h;
  s.first = nodes_.size();
  s.count = count;

  SegmentScratch& sc = segmentScratch();
  auto &c = sc.c, &w = sc.w, &g = sc.g, &y = sc.y, &v = sc.v;
  for (auto* f : {&c, &w, &g, &y, &v}) f->resize(count);
  // Nodes are uniform in the segment's log coordinate and ln y is nearly
  // linear in it, so the depth two nodes back and one back extrapolate the
  // next one (y1^2 / y0) to within a fraction of a percent: Newton then
  // converges in one or two steps.
  double solved_prev = -1.0, solved_prev2 = -1.0;
  for (std::size_t i = 0; i < count; ++i) {
    const double u = s.u0 + static_cast<double>(i) * s.h;
    const double q = (i + 1 == count) ? q1 : shift + sign * std::exp(sign * u);
    const double guess = solved_prev2 > 0 ? solved_prev * (solved_prev / solved_prev2) : solved_prev;
    double depth = section.normalDepth(q, guess);
    solved_prev2 = solved_prev;
    solved_prev = depth;
    // At exactly bank-full each segment takes the values on its own side of the bank.
    if (bank_side > 0) depth = std::max(depth, section.bankDepth() * (1.0 + 1e-12));
    if (bank_side < 0) depth = std::min(depth, section.bankDepth());
    // One Manning evaluation gives Q and dQ/dy: the same numbers as
    // section.celerity() and section.velocity().
    double q_at, dq_at;
    section.dischargeAndDerivative(depth, q_at, dq_at);
    const double width = section.topWidth(depth), area = section.area(depth);
    c[i] = width > 0 ? dq_at / width : 0.0;
    w[i] = width;
    g[i] = 1.0 / (w[i] * c[i]);
    y[i] = depth;
    v[i] = area > 0 ? q_at / area : 0.0;
  }
  monotoneSlopes(c, s.h, sc.dc, sc.delta);
  monotoneSlopes(w, s.h, sc.dw, sc.delta);
  monotoneSlopes(g, s.h, sc.dg, sc.delta);
  monotoneSlopes(y, s.h, sc.dy, sc.delta);
  monotoneSlopes(v, s.h, sc.dv, sc.delta);
  for (std::size_t i = 0; i < count; ++i)
    nodes_.push_back(Node{c[i], sc.dc[i], w[i], sc.dw[i], g[i], sc.dg[i], y[i], sc.dy[i], v[i], sc.dv[i]});
}

const RatingTable::LogEntry* RatingTable::logTable() {
  static const auto table = [] {
    std::vector<LogEntry> t(128);
    for (std::size_t k = 0; k < 128; ++k) {
      const double m0 = 1.0 + static_cast<double>(k) / 128.0;
      t[k] = LogEntry{1.0 / m0, std::log(m0)};
    }
    return t;
  }();
  return table.data();
}

void RatingTable::depthAndVelocity(double q, double& depth_m, double& velocity_ms) const {
  if (!(q >= q_lo_ && q <= q_hi_)) {  // outside the table (or NaN): solve directly
    const FlowState s = section_.normalFlow(std::isfinite(q) ? std::max(q, 0.0) : 0.0);
    depth_m = s.depth_m;
    velocity_ms = s.velocity_ms;
    return;
  }
  const Cell cell = locate(q);
  depth_m = hermite(cell.t, cell.h, cell.lo->y, cell.lo->dy, cell.lo[1].y, cell.lo[1].dy);
  velocity_ms = hermite(cell.t, cell.h, cell.lo->v, cell.lo->dv, cell.lo[1].v, cell.lo[1].dv);
}

}  // namespace reachwise::hydraulics
