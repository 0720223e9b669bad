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

  const Section& section() const noexcept { return section_; }
  double bottomDischarge() const noexcept { return q_lo_; }
  double topDischarge() const noexcept { return q_hi_; }

  /// Celerity (m/s) and top width (m) at discharge q; q outside the table is
  /// held at the nearest end. The hot-loop lookup.
  void celerityAndWidth(double q_m3s, double& celerity_ms, double& top_width_m) const {
    const Cell& c = locate(q_m3s);
    celerity_ms = hermite(c.t, c.h, c.lo->c, c.lo->dc, c.lo[1].c, c.lo[1].dc);
    top_width_m = hermite(c.t, c.h, c.lo->w, c.lo->dw, c.lo[1].w, c.lo[1].dw);
  }
  /// Celerity (m/s) and 1/(T c) (s/m^2) at discharge q, held at the ends:
  /// what a variable-parameter cell needs (D = Q/(T S0 c Δx) without a division).
  void celerityAndInverseWidthCelerity(double q_m3s, double& celerity_ms, double& inv_tc) const {
    const Cell& c = locate(q_m3s);
    celerity_ms = hermite(c.t, c.h, c.lo->c, c.lo->dc, c.lo[1].c, c.lo[1].dc);
    inv_tc = hermite(c.t, c.h, c.lo->g, c.lo->dg, c.lo[1].g, c.lo[1].dg);
  }
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
  struct Cell {
    const Node* lo;
    double t;  // position in [0, 1] within the interval
    double h;  // interval width in ln Q
  };

  void addSegment(const Section& section, double q0, double q1, std::size_t nodes, double shift,
                  double sign, int bank_side, int segment);
  Cell locate(double q) const {
    const Segment& s = (segments_ == 2 && q >= q_break_) ? seg_[1] : seg_[0];
    const double top = static_cast<double>(s.count - 1);
    const double arg = s.sign * (q - s.shift);
    double u = arg > 0 ? (s.sign * fastLog(arg) - s.u0) * s.inv_h
                       : (s.sign > 0 ? 0.0 : static_cast<double>(s.count));
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
};

}  // namespace reachwise::hydraulics
