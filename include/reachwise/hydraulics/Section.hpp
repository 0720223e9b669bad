#pragma once
/// \file
/// Prismatic channel cross-sections and steady uniform flow in them
/// (Manning's equation). SI units throughout: m, m^2, m/s, m^3/s.
///
/// Sources: Chow (1959) *Open-Channel Hydraulics*, ch. 2 and 6 (section
/// geometry, Manning's equation, normal depth); Ponce (1989) *Engineering
/// Hydrology* (kinematic celerity c = dQ/dA).

#include <limits>

namespace reachwise::hydraulics {

enum class Shape {
  Trapezoid,  ///< bottom width b, side slope z (H:V); z = 0 rectangle, b = 0 triangle
  Circle,     ///< pipe or culvert of diameter d, flowing part full
  TwoStage,   ///< trapezoidal main channel to bank depth, then a floodplain
};

/// Plain description of a section, as read from a network layer.
/// Unused members stay NaN. Validated by Section::fromSpec.
struct SectionSpec {
  static constexpr double kUnset = std::numeric_limits<double>::quiet_NaN();
  Shape shape = Shape::Trapezoid;
  double bottom_width_m = kUnset;      ///< trapezoid / two-stage main channel
  double side_slope = 0.0;             ///< horizontal per vertical, >= 0
  double diameter_m = kUnset;          ///< circle
  double bank_depth_m = kUnset;        ///< two-stage: depth of the main channel
  double floodplain_width_m = kUnset;  ///< two-stage: total floodplain width, both sides
  double floodplain_n = kUnset;        ///< two-stage: floodplain Manning's n
  double manning_n = kUnset;           ///< main channel Manning's n, s/m^(1/3)
  double bed_slope = kUnset;           ///< m/m, > 0
};

/// Hydraulic state of steady uniform flow at one depth.
struct FlowState {
  double depth_m = 0;
  double area_m2 = 0;
  double wetted_perimeter_m = 0;
  double hydraulic_radius_m = 0;
  double top_width_m = 0;
  double discharge_m3s = 0;
  double velocity_ms = 0;
  double celerity_ms = 0;   ///< kinematic wave celerity dQ/dA
  bool surcharged = false;  ///< a pipe asked for more than its capacity (depth held at the cap)
};

/// A validated cross-section with Manning's roughness and bed slope.
/// Cheap to copy; all member functions are pure.
class Section {
public:
  /// Throws InvalidParameter naming the quantity when b < 0, z < 0, b = z = 0,
  /// n <= 0, S0 <= 0 or any value is not finite.
  static Section trapezoid(double bottom_width_m, double side_slope, double manning_n,
                           double bed_slope);
  static Section rectangle(double width_m, double manning_n, double bed_slope) {
    return trapezoid(width_m, 0.0, manning_n, bed_slope);
  }
  static Section triangle(double side_slope, double manning_n, double bed_slope) {
    return trapezoid(0.0, side_slope, manning_n, bed_slope);
  }
  /// A circular pipe or culvert of diameter d flowing part full.
  static Section circle(double diameter_m, double manning_n, double bed_slope);
  /// Two-stage compound section, divided-channel method: the main channel
  /// (trapezoid to bank depth, then vertical division lines) and the
  /// floodplain (total width W_f, its own roughness, walls at its outer
  /// edges) are computed separately and Q = Q_main + Q_fp (Chow 1959, §6-8).
  static Section twoStage(double bottom_width_m, double side_slope, double bank_depth_m,
                          double floodplain_width_m, double manning_n, double floodplain_n,
                          double bed_slope);
  /// Build from a spec; throws InvalidParameter for a missing or bad value.
  static Section fromSpec(const SectionSpec& spec);

  /// The same section with every Manning's n (main channel and, for a
  /// two-stage section, floodplain) multiplied by `factor`: what a
  /// roughness calibration varies. Throws InvalidParameter("factor")
  /// unless `factor` is finite and > 0.
  Section withRoughnessScaled(double factor) const;
  /// The same section with the bottom width (a pipe: the diameter)
  /// multiplied by `factor`, as withRoughnessScaled.
  Section withWidthScaled(double factor) const;

  Shape shape() const noexcept { return shape_; }
  double manningN() const noexcept { return n_; }
  double bedSlope() const noexcept { return slope_; }
  double bottomWidth() const noexcept { return b_; }
  double sideSlope() const noexcept { return z_; }
  double diameter() const noexcept { return d_; }
  double bankDepth() const noexcept { return yb_; }

  // Geometry at depth y (m). Depths <= 0 give zero.
  double area(double depth_m) const;
  double wettedPerimeter(double depth_m) const;
  double topWidth(double depth_m) const;
  /// R = A / P (for a two-stage section: of the whole section).
  double hydraulicRadius(double depth_m) const;

  /// Manning discharge Q(y), SI: Q = (1/n) A R^(2/3) S0^(1/2).
  double discharge(double depth_m) const;
  /// dQ/dy, analytical.
  double dischargeDerivative(double depth_m) const;
  /// Q(y) and dQ/dy at once, the same numbers as discharge() and
  /// dischargeDerivative() from one Manning evaluation (one cube root per
  /// flow part instead of two): what a Newton step needs.
  void dischargeAndDerivative(double depth_m, double& discharge_m3s, double& derivative_m2s) const;
  /// Mean velocity Q/A.
  double velocity(double depth_m) const;
  /// Kinematic wave celerity c = dQ/dA = (1/T) dQ/dy.
  double celerity(double depth_m) const;
  /// Everything at once.
  FlowState stateAtDepth(double depth_m) const;

  /// Largest discharge uniform flow can carry: infinite for open sections,
  /// the maximum of Q(y) (near y = 0.938 d) for a pipe.
  double capacity() const noexcept { return q_cap_; }
  /// Depth at capacity (the pipe cap), infinite for open sections.
  double capacityDepth() const noexcept { return y_cap_; }

  /// Normal depth for discharge Q (safeguarded Newton: steps that leave the
  /// bracket known so far are replaced by bisection, or by doubling while an
  /// open section has no upper bound yet; relative tolerance 1e-10, at most
  /// 200 iterations). Throws
  /// InvalidParameter("discharge") for Q < 0, NaN, or Q beyond a pipe's capacity.
  double normalDepth(double discharge_m3s) const;
  /// The same, starting Newton from `guess_m` (a nearby solution), which
  /// typically converges in a few iterations.
  double normalDepth(double discharge_m3s, double guess_m) const;
  /// Uniform-flow state for Q. A pipe asked for more than its capacity is not
  /// iterated past the cap: depth is held at the cap and `surcharged` is set.
  FlowState normalFlow(double discharge_m3s) const;

private:
  Section() = default;
  void computeCapacity();

  Shape shape_ = Shape::Trapezoid;
  double b_ = 0, z_ = 0, d_ = 0, yb_ = 0, wf_ = 0, nf_ = 0;
  double n_ = 0, slope_ = 0;
  double q_cap_ = std::numeric_limits<double>::infinity();
  double y_cap_ = std::numeric_limits<double>::infinity();
};

}  // namespace reachwise::hydraulics
