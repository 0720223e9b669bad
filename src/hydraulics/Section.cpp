#include "reachwise/hydraulics/Section.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "reachwise/Error.hpp"

// Geometry and Manning's equation: Chow (1959) Open-Channel Hydraulics,
// Table 2-1 (section elements) and ch. 5-6 (uniform flow). Celerity
// c = dQ/dA = (1/T) dQ/dy: Ponce (1989) Engineering Hydrology, ch. 9.

namespace reachwise::hydraulics {

namespace {

void requireFinite(const char* quantity, double value) {
  if (!std::isfinite(value))
    throw InvalidParameter(quantity, "must be a finite number (got " + std::to_string(value) + ")");
}
void requirePositive(const char* quantity, double value) {
  requireFinite(quantity, value);
  if (value <= 0) throw InvalidParameter(quantity, "must be > 0 (got " + std::to_string(value) + ")");
}
void requireNonNegative(const char* quantity, double value) {
  requireFinite(quantity, value);
  if (value < 0) throw InvalidParameter(quantity, "must be >= 0 (got " + std::to_string(value) + ")");
}

/// Manning's equation for one flow part, SI: Q = (1/n) A^(5/3) P^(-2/3) S^(1/2).
double manning(double area, double perimeter, double n, double slope) {
  if (area <= 0 || perimeter <= 0) return 0.0;
  return std::sqrt(slope) / n * area * std::cbrt(area * area / (perimeter * perimeter));
}

/// dQ/dy of one flow part given dA/dy and dP/dy: from ln Q = 5/3 ln A − 2/3 ln P + const.
double manningDerivative(double q, double area, double perimeter, double dA, double dP) {
  if (area <= 0 || perimeter <= 0) return 0.0;
  return q * (5.0 / 3.0 * dA / area - 2.0 / 3.0 * dP / perimeter);
}

// Pipe: θ = 2 acos(1 − 2y/d) is the angle subtended by the free surface.
double pipeTheta(double y, double d) { return 2.0 * std::acos(std::clamp(1.0 - 2.0 * y / d, -1.0, 1.0)); }

}  // namespace

Section Section::trapezoid(double b, double z, double n, double slope) {
  requireNonNegative("bottom_width", b);
  requireNonNegative("side_slope", z);
  if (b == 0 && z == 0) throw InvalidParameter("bottom_width", "must be > 0 when side_slope is 0");
  requirePositive("manning_n", n);
  requirePositive("slope", slope);
  Section s;
  s.shape_ = Shape::Trapezoid;
  s.b_ = b;
  s.z_ = z;
  s.n_ = n;
  s.slope_ = slope;
  return s;
}

Section Section::circle(double d, double n, double slope) {
  requirePositive("diameter", d);
  requirePositive("manning_n", n);
  requirePositive("slope", slope);
  Section s;
  s.shape_ = Shape::Circle;
  s.d_ = d;
  s.n_ = n;
  s.slope_ = slope;
  s.computeCapacity();
  return s;
}

Section Section::twoStage(double b, double z, double bank_depth, double fp_width, double n,
                          double fp_n, double slope) {
  Section s = trapezoid(b, z, n, slope);
  requirePositive("bank_depth", bank_depth);
  requirePositive("floodplain_width", fp_width);
  requirePositive("floodplain_n", fp_n);
  s.shape_ = Shape::TwoStage;
  s.yb_ = bank_depth;
  s.wf_ = fp_width;
  s.nf_ = fp_n;
  return s;
}

Section Section::fromSpec(const SectionSpec& spec) {
  switch (spec.shape) {
    case Shape::Circle:
      return circle(spec.diameter_m, spec.manning_n, spec.bed_slope);
    case Shape::TwoStage:
      return twoStage(spec.bottom_width_m, spec.side_slope, spec.bank_depth_m,
                      spec.floodplain_width_m, spec.manning_n, spec.floodplain_n, spec.bed_slope);
    case Shape::Trapezoid:
      break;
  }
  return trapezoid(spec.bottom_width_m, spec.side_slope, spec.manning_n, spec.bed_slope);
}

Section Section::withRoughnessScaled(double factor) const {
  requirePositive("factor", factor);
  Section s = *this;
  s.n_ *= factor;
  s.nf_ *= factor;
  if (s.shape_ == Shape::Circle) s.computeCapacity();
  return s;
}

Section Section::withWidthScaled(double factor) const {
  requirePositive("factor", factor);
  Section s = *this;
  if (s.shape_ == Shape::Circle) {
    s.d_ *= factor;
    s.computeCapacity();
  } else {
    s.b_ *= factor;
  }
  return s;
}

void Section::computeCapacity() {
  // Q(y) of a pipe peaks below the crown (near 0.938 d; Chow 1959 §6-3):
  // locate the maximum by golden-section search on [0.85 d, d].
  const double phi = (std::sqrt(5.0) - 1.0) / 2.0;
  double lo = 0.85 * d_, hi = d_;
  double x1 = hi - phi * (hi - lo), x2 = lo + phi * (hi - lo);
  double f1 = discharge(x1), f2 = discharge(x2);
  for (int i = 0; i < 200 && hi - lo > 1e-13 * d_; ++i) {
    if (f1 < f2) {
      lo = x1; x1 = x2; f1 = f2;
      x2 = lo + phi * (hi - lo); f2 = discharge(x2);
    } else {
      hi = x2; x2 = x1; f2 = f1;
      x1 = hi - phi * (hi - lo); f1 = discharge(x1);
    }
  }
  y_cap_ = 0.5 * (lo + hi);
  q_cap_ = discharge(y_cap_);
}

double Section::area(double y) const {
  if (!(y > 0)) return 0.0;
  switch (shape_) {
    case Shape::Circle: {
      const double yy = std::min(y, d_);
      const double th = pipeTheta(yy, d_);
      return d_ * d_ * (th - std::sin(th)) / 8.0;
    }
    case Shape::TwoStage:
      if (y > yb_) return (b_ + z_ * yb_) * yb_ + (b_ + 2 * z_ * yb_ + wf_) * (y - yb_);
      [[fallthrough]];
    case Shape::Trapezoid:
      return (b_ + z_ * y) * y;
  }
  return 0.0;
}

double Section::wettedPerimeter(double y) const {
  if (!(y > 0)) return 0.0;
  const double side = std::sqrt(1.0 + z_ * z_);
  switch (shape_) {
    case Shape::Circle:
      return d_ * pipeTheta(std::min(y, d_), d_) / 2.0;
    case Shape::TwoStage:
      if (y > yb_) return b_ + 2 * yb_ * side + wf_ + 2 * (y - yb_);
      [[fallthrough]];
    case Shape::Trapezoid:
      return b_ + 2 * y * side;
  }
  return 0.0;
}

double Section::topWidth(double y) const {
  if (!(y > 0)) return shape_ == Shape::Circle ? 0.0 : b_;
  switch (shape_) {
    case Shape::Circle:
      return y >= d_ ? 0.0 : d_ * std::sin(pipeTheta(y, d_) / 2.0);
    case Shape::TwoStage:
      if (y > yb_) return b_ + 2 * z_ * yb_ + wf_;
      [[fallthrough]];
    case Shape::Trapezoid:
      return b_ + 2 * z_ * y;
  }
  return 0.0;
}

double Section::hydraulicRadius(double y) const {
  const double p = wettedPerimeter(y);
  return p > 0 ? area(y) / p : 0.0;
}

double Section::discharge(double y) const {
  if (!(y > 0)) return 0.0;
  if (shape_ == Shape::TwoStage && y > yb_) {
    // Divided-channel method: vertical division lines at the banks are not
    // wetted perimeter of either part (Chow 1959, §6-8).
    const double side = std::sqrt(1.0 + z_ * z_);
    const double a_main = (b_ + z_ * yb_) * yb_ + (b_ + 2 * z_ * yb_) * (y - yb_);
    const double p_main = b_ + 2 * yb_ * side;
    const double a_fp = wf_ * (y - yb_);
    const double p_fp = wf_ + 2 * (y - yb_);
    return manning(a_main, p_main, n_, slope_) + manning(a_fp, p_fp, nf_, slope_);
  }
  return manning(area(y), wettedPerimeter(y), n_, slope_);
}

double Section::dischargeDerivative(double y) const {
  double q = 0, dq = 0;
  dischargeAndDerivative(y, q, dq);
  return dq;
}

void Section::dischargeAndDerivative(double y, double& q, double& dq) const {
  q = 0.0;
  dq = 0.0;
  if (!(y > 0)) return;
  // Each branch repeats discharge() term by term, so q is bit-identical to
  // it (dischargeDerivative() is this function's dq).
  const double side = std::sqrt(1.0 + z_ * z_);
  switch (shape_) {
    case Shape::Circle: {
      const double a = area(y), p = wettedPerimeter(y);
      q = manning(a, p, n_, slope_);
      if (y >= d_) return;
      const double dP = 2.0 / std::sin(pipeTheta(y, d_) / 2.0);
      dq = manningDerivative(q, a, p, topWidth(y), dP);
      return;
    }
    case Shape::TwoStage:
      if (y > yb_) {
        const double t_bank = b_ + 2 * z_ * yb_;
        const double a_main = (b_ + z_ * yb_) * yb_ + t_bank * (y - yb_);
        const double p_main = b_ + 2 * yb_ * side;
        const double a_fp = wf_ * (y - yb_);
        const double p_fp = wf_ + 2 * (y - yb_);
        const double q_main = manning(a_main, p_main, n_, slope_);
        const double q_fp = manning(a_fp, p_fp, nf_, slope_);
        q = q_main + q_fp;
        dq = manningDerivative(q_main, a_main, p_main, t_bank, 0.0) +
             manningDerivative(q_fp, a_fp, p_fp, wf_, 2.0);
        return;
      }
      [[fallthrough]];
    case Shape::Trapezoid: {
      const double a = area(y), p = wettedPerimeter(y);
      q = manning(a, p, n_, slope_);
      dq = manningDerivative(q, a, p, b_ + 2 * z_ * y, 2 * side);
      return;
    }
  }
}

double Section::velocity(double y) const {
  const double a = area(y);
  return a > 0 ? discharge(y) / a : 0.0;
}

double Section::celerity(double y) const {
  const double t = topWidth(y);
  return t > 0 ? dischargeDerivative(y) / t : 0.0;
}

FlowState Section::stateAtDepth(double y) const {
  FlowState s;
  s.depth_m = std::max(y, 0.0);
  s.area_m2 = area(y);
  s.wetted_perimeter_m = wettedPerimeter(y);
  s.hydraulic_radius_m = hydraulicRadius(y);
  s.top_width_m = topWidth(y);
  s.discharge_m3s = discharge(y);
  s.velocity_ms = s.area_m2 > 0 ? s.discharge_m3s / s.area_m2 : 0.0;
  s.celerity_ms = celerity(y);
  return s;
}

double Section::normalDepth(double q) const { return normalDepth(q, -1.0); }

double Section::normalDepth(double q, double guess) const {
  if (!std::isfinite(q)) throw InvalidParameter("discharge", "must be a finite number");
  if (q < 0) throw InvalidParameter("discharge", "must be >= 0 (got " + std::to_string(q) + ")");
  if (q == 0) return 0.0;
  if (q > q_cap_)
    throw InvalidParameter("discharge", "exceeds the full-pipe capacity of " +
                                            std::to_string(q_cap_) + " m3/s (got " +
                                            std::to_string(q) + ")");
  // Q(y) is increasing on [0, y_cap]; (lo, hi) brackets the root as far as
  // it is known. A pipe starts bracketed by (0, y_cap); an open section has
  // no upper bound until Q(y) > q has been seen, and a step that would leave
  // the bracket doubles y instead. Each iteration costs one Manning
  // evaluation (Q and dQ/dy together).
  double lo = 0.0, hi = shape_ == Shape::Circle ? y_cap_ : std::numeric_limits<double>::infinity();
  double y;
  if (guess > lo && guess < hi)
    y = guess;
  else if (shape_ == Shape::Circle)
    y = 0.5 * y_cap_;
  else  // wide-channel first guess
    y = std::max(1e-3, std::pow(q * n_ / (std::max(b_, 1.0) * std::sqrt(slope_)), 0.6));
  for (int it = 0; it < 200; ++it) {
    double qy, dq;
    dischargeAndDerivative(y, qy, dq);
    const double f = qy - q;
    if (f == 0) return y;
    if (f < 0) lo = y; else hi = y;
    double next = dq > 0 ? y - f / dq : lo;  // lo: never inside (lo, hi), so replaced below
    if (!(next > lo && next < hi)) next = std::isfinite(hi) ? 0.5 * (lo + hi) : 2.0 * y;
    if (std::isfinite(hi) && std::abs(next - y) <= 1e-10 * std::max(next, 1e-12)) return next;
    y = next;
  }
  if (!std::isfinite(hi)) throw InvalidParameter("discharge", "normal depth not bracketed");
  return y;  // converged to the bracket width limit; still within (lo, hi)
}

FlowState Section::normalFlow(double q) const {
  if (shape_ == Shape::Circle && q > q_cap_) {
    FlowState s = stateAtDepth(y_cap_);
    s.surcharged = true;
    return s;
  }
  return stateAtDepth(normalDepth(q));
}

}  // namespace reachwise::hydraulics
