#include "reachwise/hydraulics/ConveyanceTable.hpp"

#include <algorithm>

namespace reachwise::hydraulics {

void ConveyanceTable::build(const Section& sec, double top_m) {
  sec_ = &sec;
  segments_ = 0;
  direct_ = sec.shape() == Shape::Circle || !(top_m > 0);
  if (direct_) return;
  top_ = top_m;
  // Q(y) grows as (y − y0)^(5/3) from the bed and, for the floodplain's
  // part, from the bank: a derivative that is not smooth there. The first
  // twentieth above each gets a finer segment of its own.
  const auto rise = [&](double y0, double y1, bool last_below_bank) {
    const double fine = y0 + kFineShare * (y1 - y0);
    fill(seg_[segments_++], y0, fine);
    fill(seg_[segments_++], fine, y1);
    if (last_below_bank) {
      // At bank-full Q is continuous and dQ/dy is not: the node there takes
      // the derivative of the channel below, at a depth a hair under it.
      double q;
      sec.dischargeAndDerivative(y1 * (1 - 1e-9), q, seg_[segments_ - 1].dq[kIntervals]);
    }
  };
  if (sec.shape() == Shape::TwoStage && sec.bankDepth() < top_m) {
    rise(0.0, sec.bankDepth(), true);
    rise(sec.bankDepth(), top_m, false);
    double q;  // the bank node of the segment above: the floodplain's side
    sec.dischargeAndDerivative(sec.bankDepth() * (1 + 1e-9), q, seg_[2].dq[0]);
  } else {
    rise(0.0, top_m, false);
  }
}

/// The nodes of [y0, y1].
void ConveyanceTable::fill(Segment& s, double y0, double y1) const {
  s.y0 = y0;
  s.y1 = y1;
  s.h = (y1 - y0) / kIntervals;
  s.inv_h = 1.0 / s.h;
  s.q.resize(kIntervals + 1);
  s.dq.resize(kIntervals + 1);
  for (std::size_t i = 0; i <= kIntervals; ++i) {
    const double y = i == kIntervals ? y1 : y0 + s.h * static_cast<double>(i);
    sec_->dischargeAndDerivative(y, s.q[i], s.dq[i]);
  }
}

void ConveyanceTable::dischargeAndDerivative(double y, double& q, double& dq) const {
  y = std::max(y, 0.0);
  if (direct_ || y > top_) {
    sec_->dischargeAndDerivative(y, q, dq);
    return;
  }
  std::size_t k = 0;
  while (k + 1 < segments_ && y >= seg_[k].y1) ++k;
  const Segment& s = seg_[k];
  const double u = (y - s.y0) * s.inv_h;
  const std::size_t i = std::min(static_cast<std::size_t>(u), kIntervals - 1);
  const double t = u - static_cast<double>(i);
  // Cubic Hermite on [y_i, y_i+1] in t = (y − y_i)/h (the basis h00, h10,
  // h01, h11), the derivative-node values scaled by h.
  const double p0 = s.q[i], p1 = s.q[i + 1], m0 = s.dq[i] * s.h, m1 = s.dq[i + 1] * s.h;
  const double t2 = t * t, t3 = t2 * t;
  q = (2 * t3 - 3 * t2 + 1) * p0 + (t3 - 2 * t2 + t) * m0 + (3 * t2 - 2 * t3) * p1 + (t3 - t2) * m1;
  dq = ((6 * t2 - 6 * t) * (p0 - p1) + (3 * t2 - 4 * t + 1) * m0 + (3 * t2 - 2 * t) * m1) * s.inv_h;
}

}  // namespace reachwise::hydraulics
