#pragma once
/// \file
/// A per-reach rating table: celerity, top width, depth and velocity of
/// uniform flow against discharge, so variable-parameter routing does not
/// solve for normal depth in every cell.
///
/// Nodes are uniform in ln Q; between nodes each quantity is a monotone
/// piecewise cubic Hermite interpolant (Fritsch & Carlson 1980, *SIAM J.
/// Numer. Anal.* 17(2), 238–246), so no spurious extrema appear.
/// Where the section has a singular point the table has a second segment
/// whose coordinate resolves it:
///  - two-stage: above bank-full Q_b the coordinate is ln(Q − Q_b), since the
///    floodplain's share grows as (Q − Q_b)^(2/3) and top width and celerity
///    jump at the bank (kept, not smeared);
///  - pipe: above half capacity the coordinate is −ln(Q_cap − Q), since
///    celerity falls to zero as √(Q_cap − Q) near the cap.
///
/// For the routing hot loop the table also keeps c and 1/(T c) on a dense
/// grid, linear between nodes, whose cell is read straight off the bits of
/// the segment's coordinate a (Q, Q − Q_b or Q_cap − Q): the exponent and
/// the top kLinearBits mantissa bits, i.e. 2^kLinearBits cells per octave of
/// a. No logarithm, no cubic, no search: a shift, one load, one multiply-add.
/// The dense grid is split at the same singular points, so the bank's jump
/// stays a cell edge.

#include <bit>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::hydraulics {

class RatingTable {
public:
  /// Table over [q_min, q_max] (m^3/s, 0 < q_min < q_max) with `nodes`
  /// nodes per segment. For a pipe q_max is capped just below capacity
  /// (see topDischarge()). Throws InvalidParameter for a bad range.
  RatingTable(const Section& section, double q_min_m3s, double q_max_m3s,
              std::size_t nodes = 64);
  /// Replaces the table by the one the constructor would build, reusing its
  /// storage (a router building one table per reach allocates nothing once
  /// warm). On InvalidParameter the table is left unchanged.
  void rebuild(const Section& section, double q_min_m3s, double q_max_m3s, std::size_t nodes = 64);

  const Section& section() const noexcept { return section_; }
  double bottomDischarge() const noexcept { return q_lo_; }
  double topDischarge() const noexcept { return q_hi_; }

  /// Celerity (m/s) and top width (m) at discharge q from the cubic; q
  /// outside the table is held at the nearest end.
  void celerityAndWidth(double q_m3s, double& celerity_ms, double& top_width_m) const {
    const Cell& c = locate(q_m3s);
    celerity_ms = hermite(c.t, c.h, c.lo->c, c.lo->dc, c.lo[1].c, c.lo[1].dc);
    top_width_m = hermite(c.t, c.h, c.lo->w, c.lo->dw, c.lo[1].w, c.lo[1].dw);
  }
  /// Celerity (m/s) and 1/(T c) (s/m^2) at discharge q, held at the ends:
  /// what a variable-parameter cell needs (D = Q/(T S0 c Δx) without a
  /// division). Read from the dense linear grid (see the file comment); its
  /// distance from the direct solve is stated in RatingTableTest.
  void celerityAndInverseWidthCelerity(double q_m3s, double& celerity_ms, double& inv_tc) const {
    // One branch on a per-table constant for one-segment tables, so it is
    // predicted and costs no latency; two-segment tables branch on the side
    // of the singular point, which changes only when the flow crosses it.
    if (q_m3s >= q_linear_break_) [[unlikely]]
      linearAt(linear_[1], linear_[1].sign * (q_m3s - linear_[1].shift), celerity_ms, inv_tc);
    else
      linearAt(linear_[0], q_m3s, celerity_ms, inv_tc);  // plain segment: a = Q
  }
  /// Dense-grid cells per octave of the coordinate: 2^kLinearBits.
  static constexpr int kLinearBits = 5;
  /// Depth (m) and velocity (m/s) at discharge q; outside the table they are
  /// solved directly (a pipe above capacity reports the depth at the cap).
  void depthAndVelocity(double q_m3s, double& depth_m, double& velocity_ms) const;

private:
  struct Node {
    double c, dc;  // celerity and d(celerity)/d(ln Q)
    double w, dw;  // top width
    double g, dg;  // 1 / (top width · celerity)
    double y, dy;  // depth
    double v, dv;  // velocity
  };
  struct Segment {
    double shift = 0, sign = 1;  // coordinate u = sign · ln(sign · (q − shift))
    double u0 = 0, inv_h = 0, h = 0;
    std::size_t first = 0, count = 0;  // nodes[first .. first+count)
  };
  /// One dense-grid cell: c = c0 + c1 a and 1/(T c) = g0 + g1 a, the chords
  /// through the values at the cell's ends (slope-intercept form, so the
  /// lookup needs no position within the cell).
  struct LinearCell {
    double c0, c1, g0, g1;
  };
  struct LinearSegment {
    double shift = 0, sign = 1;  // coordinate a = sign · (q − shift)
    double a_lo = 1, a_hi = 1;   // range of a; a is held inside it
    std::int64_t key0 = 0;       // key(a_lo): the first cell's key
    std::size_t first = 0;       // linear_cells_[first + key(a) − key0]
  };
  struct Cell {
    const Node* lo;
    double t;  // position in [0, 1] within the interval
    double h;  // interval width in ln Q
  };

  void addSegment(const Section& section, double q0, double q1, std::size_t nodes, double shift,
                  double sign, int bank_side, int segment);
  void buildLinearGrid();
  void addLinearSegment(const Segment& s, double a_lo, double a_hi, LinearSegment& out);
  void hermiteCelerityAndG(const Segment& s, double a, double& celerity_ms, double& inv_tc) const;
  /// Cell key of a > 0: its exponent and top mantissa bits. The bits of a
  /// positive double grow with its value, so keys grow with a.
  static std::int64_t linearKey(double a) {
    return static_cast<std::int64_t>(std::bit_cast<std::uint64_t>(a) >> (52 - kLinearBits));
  }
  static double linearKeyStart(std::int64_t key) {
    return std::bit_cast<double>(static_cast<std::uint64_t>(key) << (52 - kLinearBits));
  }
  void linearAt(const LinearSegment& s, double a, double& celerity_ms, double& inv_tc) const {
    if (!(a > s.a_lo)) a = s.a_lo;  // held at the ends (NaN too), so the key stays in range
    if (a > s.a_hi) a = s.a_hi;
    const LinearCell& c = linear_cells_[s.first + static_cast<std::size_t>(linearKey(a) - s.key0)];
    celerity_ms = c.c0 + c.c1 * a;
    inv_tc = c.g0 + c.g1 * a;
  }
  Cell locate(double q) const {
    const Segment& s = (segments_ == 2 && q >= q_break_) ? seg_[1] : seg_[0];
    const double arg = s.sign * (q - s.shift);
    return cellAt(s, arg > 0 ? (s.sign * fastLog(arg) - s.u0) * s.inv_h
                             : (s.sign > 0 ? 0.0 : static_cast<double>(s.count)));
  }
  /// The interval holding position u (in node spacings from the segment's first node).
  Cell cellAt(const Segment& s, double u) const {
    const double top = static_cast<double>(s.count - 1);
    if (!(u > 0)) u = 0;  // also catches NaN
    if (u >= top) return Cell{&nodes_[s.first + s.count - 2], 1.0, s.h};
    const auto i = static_cast<std::size_t>(u);
    return Cell{&nodes_[s.first + i], u - static_cast<double>(i), s.h};
  }
  /// Natural logarithm to about 1e-12 relative, faster than std::log in the
  /// hot loop: ln q = e ln 2 + ln(m0) + ln(1 + r) with m0 from a 128-entry
  /// table of the mantissa's leading bits and |r| < 1/128 (a short series).
  static double fastLog(double q) {
    const auto bits = std::bit_cast<std::uint64_t>(q);
    const int e = static_cast<int>((bits >> 52) & 0x7ff) - 1023;
    const std::size_t k = (bits >> 45) & 0x7f;
    const double m = std::bit_cast<double>((bits & 0x000fffffffffffffULL) | 0x3ff0000000000000ULL);
    const LogEntry& le = logTable()[k];
    const double r = m * le.inv - 1.0;  // in [0, 1/128)
    const double r2 = r * r;
    const double series = r - r2 * (0.5 - r * (1.0 / 3.0 - r * (0.25 - r * 0.2)));
    return e * 0.6931471805599453 + le.ln + series;
  }
  struct LogEntry {
    double inv, ln;  // 1/m0 and ln m0 for m0 = 1 + k/128
  };
  static const LogEntry* logTable();
  static double hermite(double t, double h, double f0, double d0, double f1, double d1) {
    const double t2 = t * t, t3 = t2 * t;
    return (2 * t3 - 3 * t2 + 1) * f0 + (t3 - 2 * t2 + t) * h * d0 + (-2 * t3 + 3 * t2) * f1 +
           (t3 - t2) * h * d1;
  }

  Section section_;
  std::vector<Node> nodes_;
  Segment seg_[2];
  int segments_ = 1;
  double q_break_ = 0;  // first discharge of the second segment
  double q_lo_ = 0, q_hi_ = 0;
  std::vector<LinearCell> linear_cells_;
  LinearSegment linear_[2];  // [0] plain (a = Q), [1] the second segment's coordinate
  double q_linear_break_ = 0;  // queries at or above it use linear_[1]
};

}  // namespace reachwise::hydraulics
