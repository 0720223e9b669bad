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

#include <cmath>
#include <cstddef>
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
  /// Depth (m) and velocity (m/s) at discharge q; outside the table they are
  /// solved directly (a pipe above capacity reports the depth at the cap).
  void depthAndVelocity(double q_m3s, double& depth_m, double& velocity_ms) const;

private:
  struct Node {
    double c, dc;  // celerity and d(celerity)/d(ln Q)
    double w, dw;  // top width
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
    double u = arg > 0 ? (s.sign * std::log(arg) - s.u0) * s.inv_h
                       : (s.sign > 0 ? 0.0 : static_cast<double>(s.count));
    if (!(u > 0)) u = 0;  // also catches NaN
    if (u >= top) return Cell{&nodes_[s.first + s.count - 2], 1.0, s.h};
    const auto i = static_cast<std::size_t>(u);
    return Cell{&nodes_[s.first + i], u - static_cast<double>(i), s.h};
  }
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
