#include "reachwise/network/geos/LineParts.hpp"

#include <algorithm>

#include "GeosHandle.hpp"

namespace reachwise::network::geos {

namespace {
bool samePoint(const Point3& a, const Point3& b) { return a.x == b.x && a.y == b.y; }
}  // namespace

std::optional<std::vector<Point3>> mergeLineParts(const std::vector<std::vector<Point3>>& parts) {
  if (parts.empty()) return std::nullopt;
  if (parts.size() == 1) return parts.front();
  GeosContext ctx;
  std::vector<GEOSGeometry*> lines;
  for (const auto& part : parts) lines.push_back(makeLine(ctx, part).release());
  GeomPtr multi = own(ctx, GEOSGeom_createCollection_r(ctx.get(), GEOS_MULTILINESTRING,
                                                       lines.data(),
                                                       static_cast<unsigned>(lines.size())));
  GeomPtr merged = own(ctx, GEOSLineMerge_r(ctx.get(), multi.get()));
  if (GEOSGeomTypeId_r(ctx.get(), merged.get()) != GEOS_LINESTRING) return std::nullopt;
  std::vector<Point3> out = linePoints(ctx, merged.get());
  // Keep the digitised direction of the first part when the merger reversed it.
  const auto& first = parts.front();
  auto at = [&out](const Point3& p) {
    return std::find_if(out.begin(), out.end(), [&p](const Point3& q) { return samePoint(p, q); });
  };
  if (at(first.front()) > at(first.back())) std::reverse(out.begin(), out.end());
  return out;
}

}  // namespace reachwise::network::geos
