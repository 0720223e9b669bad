#pragma once
/// \file
/// Manning's discharge Q(y) and dQ/dy of an open section (trapezoid or
/// two-stage) on a grid of depths, read by cubic Hermite interpolation of
/// the values and their analytical derivatives at the nodes: what the
/// implicit diffusion-wave solver evaluates in every cell at every Newton
/// step, where the direct formula costs a cube root per flow part. The
/// derivative returned is the interpolant's own, so Newton's method sees a
/// consistent Jacobian. A two-stage section's grid has a node at bank-full,
/// with the derivatives of each side, so its kink is kept. Depths outside
/// [0, top] and pipes (whose perimeter has an infinite slope at the invert
/// and the crown) are computed directly.

#include <cstddef>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::hydraulics {

class ConveyanceTable {
public:
  /// Intervals per segment. The depths from the bed to `top` (for a
  /// two-stage section: to the bank, and from the bank to `top`) are two
  /// segments each, the first twentieth (kFineShare) apart, where Q grows
  /// as (y − y0)^(5/3) and cubic Hermite converges slowest. Relative error
  /// (tests/hydraulics/ConveyanceTableTest.cpp): below 1e-7 of Q for depths
  /// from a tenth of `top` up, across a two-stage bank too.
  static constexpr std::size_t kIntervals = 128;
  static constexpr double kFineShare = 0.05;

  /// The table of `sec` over depths [0, top_m] (m, > 0); `sec` must
  /// outlive the table.
  ConveyanceTable(const Section& sec, double top_m) { build(sec, top_m); }

  /// Q(y) and dQ/dy at depth y (m; below 0 taken as 0).
  void dischargeAndDerivative(double depth_m, double& discharge_m3s, double& derivative_m2s) const;

private:
  struct Segment {
    double y0 = 0, y1 = 0, h = 1, inv_h = 1;
    std::vector<double> q, dq;  // kIntervals + 1 nodes
  };
  void build(const Section& sec, double top_m);
  void fill(Segment& s, double y0, double y1) const;
  const Section* sec_ = nullptr;  // the section the table was built for, which must outlive it
  bool direct_ = true;
  double top_ = 0;
  Segment seg_[4];
  std::size_t segments_ = 0;
};

}  // namespace reachwise::hydraulics
