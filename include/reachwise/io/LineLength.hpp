#pragma once
/// \file
/// Length in metres of a line given in CRS coordinates.

#include <vector>

#include "reachwise/network/ReachTable.hpp"

namespace reachwise::io {

/// Measures lines either in a plane (projected CRS, or a layer without CRS
/// whose unit the config states) or on an ellipsoid (geographic CRS).
class LineLength {
public:
  /// Planar: Euclidean length in CRS units × metres per CRS unit.
  static LineLength planar(double metres_per_unit);
  /// Geodesic on the ellipsoid (semi-major axis a in metres, flattening f):
  /// sum of the geodesic distances between consecutive vertices
  /// (Karney 2013, "Algorithms for geodesics", J. Geodesy 87:43-55, as
  /// implemented by GeographicLib). `degrees_per_unit` converts the CRS's
  /// angular unit; `lat_first` says the first coordinate is the latitude.
  static LineLength geodesic(double a_m, double f, double degrees_per_unit, bool lat_first);

  /// Length in metres; NaN when a coordinate is not finite.
  double operator()(const std::vector<network::Point3>& line) const;

  bool isGeodesic() const noexcept { return geodesic_; }
  /// Metres per CRS unit (planar), or a nominal 111 320 m per degree
  /// (geodesic; 1/360 of the equator). Tolerances do not use it: they are
  /// measured at each line end's latitude (network::geos::CrsMetric).
  double metresPerUnit() const noexcept;

private:
  LineLength() = default;
  bool geodesic_ = false;
  double unit_m_ = 1.0;
  double a_m_ = 0, f_ = 0, deg_per_unit_ = 1;
  bool lat_first_ = false;
};

}  // namespace reachwise::io
