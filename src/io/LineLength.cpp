#include "reachwise/io/LineLength.hpp"

#include <GeographicLib/Geodesic.hpp>

#include <cmath>
#include <limits>

namespace reachwise::io {

LineLength LineLength::planar(double metres_per_unit) {
  LineLength l;
  l.unit_m_ = metres_per_unit;
  return l;
}

LineLength LineLength::geodesic(double a_m, double f, double degrees_per_unit, bool lat_first) {
  LineLength l;
  l.geodesic_ = true;
  l.a_m_ = a_m;
  l.f_ = f;
  l.deg_per_unit_ = degrees_per_unit;
  l.lat_first_ = lat_first;
  return l;
}

double LineLength::metresPerUnit() const noexcept {
  return geodesic_ ? 111320.0 * deg_per_unit_ : unit_m_;
}

double LineLength::operator()(const std::vector<network::Point3>& line) const {
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  for (const auto& p : line)
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) return nan;
  double sum = 0;
  if (!geodesic_) {
    for (std::size_t i = 1; i < line.size(); ++i)
      sum += std::hypot(line[i].x - line[i - 1].x, line[i].y - line[i - 1].y);
    return sum * unit_m_;
  }
  const GeographicLib::Geodesic geod(a_m_, f_);
  auto lat = [this](const network::Point3& p) { return (lat_first_ ? p.x : p.y) * deg_per_unit_; };
  auto lon = [this](const network::Point3& p) { return (lat_first_ ? p.y : p.x) * deg_per_unit_; };
  for (std::size_t i = 1; i < line.size(); ++i) {
    const double la1 = lat(line[i - 1]), la2 = lat(line[i]);
    if (std::abs(la1) > 90 || std::abs(la2) > 90) return nan;  // not a latitude
    double s12 = 0;
    geod.Inverse(la1, lon(line[i - 1]), la2, lon(line[i]), s12);
    sum += s12;
  }
  return sum;
}

}  // namespace reachwise::io
