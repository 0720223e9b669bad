#include "reachwise/io/GaugeReader.hpp"

#include <GeographicLib/Geodesic.hpp>
#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <set>

#include "GdalSupport.hpp"
#include "reachwise/io/Gdal.hpp"

namespace reachwise::io {

namespace {

constexpr double kMetresPerDegree = 111320.0;  // nominal: 1/360 of the equator (LineLength::metresPerUnit)

bool isPointType(OGRwkbGeometryType t) {
  const auto flat = wkbFlatten(t);
  return flat == wkbPoint || flat == wkbMultiPoint;
}

std::string textField(OGRFeature& f, const char* name) { return trimmedText(f, name).value_or(""); }

/// Local metres about a gauge: planar CRS units scaled, or longitude and
/// latitude on a local equirectangular grid (for finding the nearest line;
/// the distance reported is then measured on the ellipsoid).
struct LocalMetric {
  const GaugeTable& t;
  network::Point2 origin;
  double lon0 = 0, lat0 = 0, cos_lat0 = 1;

  LocalMetric(const GaugeTable& table, network::Point2 o) : t(table), origin(o) {
    if (t.geographic) {
      lonLat(o, lon0, lat0);
      cos_lat0 = std::cos(lat0 * M_PI / 180.0);
    }
  }
  void lonLat(network::Point2 p, double& lon, double& lat) const {
    const double a = p.x * t.degrees_per_unit, b = p.y * t.degrees_per_unit;
    lon = t.lat_first ? b : a;
    lat = t.lat_first ? a : b;
  }
  network::Point2 local(double x, double y) const {
    if (!t.geographic) return {(x - origin.x) * t.metres_per_unit, (y - origin.y) * t.metres_per_unit};
    double lon = 0, lat = 0;
    lonLat({x, y}, lon, lat);
    double dlon = lon - lon0;
    if (dlon > 180) dlon -= 360;
    if (dlon < -180) dlon += 360;
    return {dlon * cos_lat0 * kMetresPerDegree, (lat - lat0) * kMetresPerDegree};
  }
  /// Back from local metres to CRS units.
  network::Point2 crs(network::Point2 m) const {
    if (!t.geographic) return {origin.x + m.x / t.metres_per_unit, origin.y + m.y / t.metres_per_unit};
    const double lon = lon0 + m.x / (cos_lat0 * kMetresPerDegree), lat = lat0 + m.y / kMetresPerDegree;
    return t.lat_first ? network::Point2{lat / t.degrees_per_unit, lon / t.degrees_per_unit}
                       : network::Point2{lon / t.degrees_per_unit, lat / t.degrees_per_unit};
  }
  /// Distance (m) from the origin to `p` (CRS units): geodesic on a geographic CRS.
  double metres(network::Point2 p) const {
    if (!t.geographic) return std::hypot(p.x - origin.x, p.y - origin.y) * t.metres_per_unit;
    const GeographicLib::Geodesic geod(t.semi_major_m, t.flattening);
    double lon = 0, lat = 0, s12 = 0;
    lonLat(p, lon, lat);
    geod.Inverse(lat0, lon0, lat, lon, s12);
    return s12;
  }
};

/// Nearest point of a segment to the origin (local metres).
network::Point2 nearestOnSegment(network::Point2 a, network::Point2 b) {
  const double dx = b.x - a.x, dy = b.y - a.y, len2 = dx * dx + dy * dy;
  const double t = len2 > 0 ? std::clamp(-(a.x * dx + a.y * dy) / len2, 0.0, 1.0) : 0.0;
  return {a.x + t * dx, a.y + t * dy};
}

}  // namespace

GaugeTable readGauges(const std::string& source, const GaugeReadOptions& options) {
  ensureGdal();
  InputLocation where;
  where.file = source;
  CPLErrorReset();
  recoverHotJournal(source);  // a killed writer's journal would make the open fail
  CPLErrorReset();
  GDALDatasetUniquePtr ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) throwWithGdalMessage(where, "cannot open the gauges as vector data");
  OGRLayer* layer = chooseLayer(*ds, options.layer, where, isPointType, "point", "gauges_layer");
  where.layer = layer->GetName();
  GaugeTable table;
  table.source = source;
  table.layer = layer->GetName();

  const OGRSpatialReference* srs = layerCrsMatching(*layer, options.network_crs_wkt, where, "the gauges");
  const LayerMetric metric = layerMetric(srs, options.length_unit_m, where, "the gauges layer");
  table.geographic = metric.geographic;
  table.metres_per_unit = metric.metres_per_unit;
  table.semi_major_m = metric.semi_major_m;
  table.flattening = metric.flattening;
  table.degrees_per_unit = metric.degrees_per_unit;
  table.lat_first = metric.lat_first;
  if (layer->GetLayerDefn()->GetFieldIndex("gauge_id") < 0) {
    where.field = "gauge_id";
    throw InputError(where, "the gauges layer has no gauge_id field");
  }

  std::set<std::string> seen;
  layer->ResetReading();
  for (auto& feature : *layer) {
    InputLocation at = where;
    at.fid = feature->GetFID();
    GaugeRecord g;
    g.fid = feature->GetFID();
    g.gauge_id = textField(*feature, "gauge_id");
    if (g.gauge_id.empty()) {
      at.field = "gauge_id";
      throw InputError(at, "the gauge has no id");
    }
    at.gauge_id = g.gauge_id;
    if (!seen.insert(g.gauge_id).second) {
      at.field = "gauge_id";
      throw InputError(at, "the id of an earlier gauge");
    }
    g.reach_id = textField(*feature, "reach_id");
    const OGRGeometry* geom = feature->GetGeometryRef();
    if (!geom || geom->IsEmpty()) throw InputError(at, "the gauge has no geometry");
    const OGRPoint* p = nullptr;
    if (wkbFlatten(geom->getGeometryType()) == wkbPoint) {
      p = geom->toPoint();
    } else if (wkbFlatten(geom->getGeometryType()) == wkbMultiPoint && geom->toMultiPoint()->getNumGeometries() == 1) {
      p = geom->toMultiPoint()->getGeometryRef(0);
    } else {
      throw InputError(at, fmt::format("the geometry is a {}, not a point",
                                       OGRGeometryTypeToName(wkbFlatten(geom->getGeometryType()))));
    }
    g.at = {p->getX(), p->getY()};
    if (!std::isfinite(g.at.x) || !std::isfinite(g.at.y)) throw InputError(at, "the point is not finite");
    table.gauges.push_back(std::move(g));
  }
  if (table.gauges.empty()) throw InputError(where, "the gauges layer has no features");
  return table;
}

std::vector<GaugePlace> placeGauges(const GaugeTable& gauges, const network::ReachTable& table,
                                    const network::NetworkPlan& plan, double tolerance_m) {
  std::map<std::string_view, std::size_t> by_id;
  for (std::size_t r = 0; r < plan.size(); ++r) by_id.emplace(plan.reach_id[r], r);
  const auto lineOf = [&](std::size_t r) -> const std::vector<network::Point3>& {
    return table.reaches[plan.record[r]].line;
  };
  // Bounding boxes of the lines, CRS units: a cheap test before the segments.
  struct Box {
    double x0, y0, x1, y1;
  };
  std::vector<Box> boxes;
  boxes.reserve(plan.size());
  for (std::size_t r = 0; r < plan.size(); ++r) {
    Box b{std::numeric_limits<double>::infinity(), std::numeric_limits<double>::infinity(),
          -std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity()};
    for (const auto& v : lineOf(r)) {
      b.x0 = std::min(b.x0, v.x), b.y0 = std::min(b.y0, v.y);
      b.x1 = std::max(b.x1, v.x), b.y1 = std::max(b.y1, v.y);
    }
    boxes.push_back(b);
  }

  std::vector<GaugePlace> places;
  for (const auto& g : gauges.gauges) {
    InputLocation at;
    at.file = gauges.source;
    at.layer = gauges.layer;
    at.fid = g.fid;
    at.gauge_id = g.gauge_id;
    GaugePlace place;
    if (!g.reach_id.empty()) {
      if (!by_id.count(g.reach_id)) {
        at.field = "reach_id";
        throw InputError(at, fmt::format("no reach {} in the network", g.reach_id));
      }
      place.reach_id = g.reach_id;
      place.snap_distance_m = std::numeric_limits<double>::quiet_NaN();
      places.push_back(std::move(place));
      continue;
    }
    const LocalMetric metric(gauges, g.at);
    // Box margin in CRS units: generous on a geographic CRS (longitude
    // degrees shrink with latitude; 1e-3 keeps it finite at the poles).
    const double margin = gauges.geographic
                              ? tolerance_m / (kMetresPerDegree * std::max(metric.cos_lat0, 1e-3)) / gauges.degrees_per_unit
                              : tolerance_m / gauges.metres_per_unit;
    struct Candidate {
      std::size_t reach;
      double d_m, to_bottom_m;
      network::Point2 nearest;  // local metres
    };
    std::vector<Candidate> near;
    std::size_t closest = 0;
    double closest_d = std::numeric_limits<double>::infinity();
    for (std::size_t r = 0; r < plan.size(); ++r) {
      const auto& line = lineOf(r);
      if (line.empty()) continue;
      const Box& b = boxes[r];
      const bool in_box = g.at.x >= b.x0 - margin && g.at.x <= b.x1 + margin && g.at.y >= b.y0 - margin &&
                          g.at.y <= b.y1 + margin;
      if (!in_box && std::isfinite(closest_d) && closest_d <= tolerance_m) continue;
      double best = std::numeric_limits<double>::infinity();
      network::Point2 best_pt{};
      network::Point2 prev = metric.local(line.front().x, line.front().y);
      if (line.size() == 1) best = std::hypot(prev.x, prev.y), best_pt = prev;
      for (std::size_t k = 1; k < line.size(); ++k) {
        const network::Point2 cur = metric.local(line[k].x, line[k].y);
        const network::Point2 q = nearestOnSegment(prev, cur);
        const double d = std::hypot(q.x, q.y);
        if (d < best) best = d, best_pt = q;
        prev = cur;
      }
      if (best < closest_d) closest_d = best, closest = r;
      const network::Point2 bm = metric.local(plan.bottom[r].x, plan.bottom[r].y);
      if (best <= tolerance_m) near.push_back({r, best, std::hypot(bm.x, bm.y), best_pt});
    }
    if (near.empty()) {
      throw InputError(at, std::isfinite(closest_d)
                               ? fmt::format("the gauge lies {:.1f} m from the nearest reach ({}), beyond the {} m "
                                             "tolerance (gauge_snap_m); give its reach_id or move it",
                                             closest_d, plan.reach_id[closest], tolerance_m)
                               : std::string("the network has no reach lines to place the gauge on"));
    }
    // Nearest first; within 1 mm the reach whose downstream end is nearer, then by id.
    std::sort(near.begin(), near.end(), [&](const Candidate& a, const Candidate& b) {
      if (std::abs(a.d_m - b.d_m) > 1e-3) return a.d_m < b.d_m;
      if (std::abs(a.to_bottom_m - b.to_bottom_m) > 1e-3) return a.to_bottom_m < b.to_bottom_m;
      return plan.reach_id[a.reach] < plan.reach_id[b.reach];
    });
    const Candidate& best = near.front();
    place.reach_id = plan.reach_id[best.reach];
    place.snap_distance_m = metric.metres(metric.crs(best.nearest));
    for (std::size_t k = 1; k < near.size() && std::abs(near[k].d_m - best.d_m) <= 1e-3; ++k)
      place.tied.push_back(plan.reach_id[near[k].reach]);
    places.push_back(std::move(place));
  }
  return places;
}

}  // namespace reachwise::io
