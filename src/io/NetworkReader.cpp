#include "reachwise/io/NetworkReader.hpp"

#include <fmt/core.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <set>
#include <unordered_set>

#include "ReachAttributes.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/LineLength.hpp"
#include "reachwise/network/geos/LineParts.hpp"
#include "reachwise/terrain/Dem.hpp"

namespace reachwise::io {

using network::Point3;
using network::reachProblem;
using network::ProblemList;
using network::ReachRecord;
using network::ReachTable;
using network::ProblemCode;

namespace {

GDALDatasetUniquePtr openSource(const std::string& source) {
  ensureGdal();
  CPLErrorReset();
  recoverHotJournal(source);  // a killed writer's journal would make the open fail
  CPLErrorReset();
  GDALDatasetUniquePtr ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) {
    InputLocation where;
    where.file = source;
    const std::string why = CPLGetLastErrorMsg();
    throw InputError(where, "cannot open as vector data" + (why.empty() ? "" : ": " + why));
  }
  return ds;
}

bool isLineType(OGRwkbGeometryType t) {
  switch (wkbFlatten(t)) {
    case wkbLineString:
    case wkbMultiLineString:
    case wkbCircularString:
    case wkbCompoundCurve:
    case wkbMultiCurve:
      return true;
    default:
      return false;
  }
}

/// A `reaches` layer that `route --write-back` added to the source (prefix
/// `rw_`, a `peak_q` field): not a network to choose automatically, so that
/// a second run on the same file finds the original layer again.
bool isWrittenBackResults(OGRLayer& layer) {
  return std::string_view(layer.GetName()).rfind("rw_", 0) == 0 &&
         layer.GetLayerDefn()->GetFieldIndex("peak_q") >= 0;
}

std::vector<std::string> lineLayerNames(GDALDataset& ds) {
  std::vector<std::string> names;
  for (OGRLayer* layer : ds.GetLayers())
    if (isLineType(layer->GetGeomType()) && !isWrittenBackResults(*layer))
      names.emplace_back(layer->GetName());
  return names;
}

std::string joined(const std::vector<std::string>& names) {
  std::string out;
  for (const auto& n : names) out += (out.empty() ? "" : ", ") + n;
  return out.empty() ? "(none)" : out;
}

OGRLayer* chooseLayer(GDALDataset& ds, const std::string& wanted, const std::string& source) {
  InputLocation where;
  where.file = source;
  std::vector<std::string> all;
  for (OGRLayer* layer : ds.GetLayers()) all.emplace_back(layer->GetName());
  if (!wanted.empty()) {
    if (OGRLayer* layer = ds.GetLayerByName(wanted.c_str())) return layer;
    throw InputError(where, fmt::format("no layer named {}; layers: {}", wanted, joined(all)));
  }
  const auto lines = lineLayerNames(ds);
  if (lines.size() == 1) return ds.GetLayerByName(lines.front().c_str());
  if (lines.size() > 1)
    throw InputError(where, fmt::format("several line layers ({}); choose one by name",
                                        joined(lines)));
  // A single layer of unknown geometry type (e.g. mixed GeoJSON) is taken as is.
  if (all.size() == 1 && wkbFlatten(ds.GetLayer(0)->GetGeomType()) == wkbUnknown)
    return ds.GetLayer(0);
  throw InputError(where, fmt::format("no line layer; layers: {}", joined(all)));
}

/// Length measure for the layer's CRS; `metric` receives the same CRS
/// description for the topology's distances.
LineLength lengthMeasure(const OGRLayer& layer, const NetworkConfig& config,
                         const InputLocation& where, ReachTable& table,
                         network::geos::CrsMetric& metric) {
  const OGRSpatialReference* srs = const_cast<OGRLayer&>(layer).GetSpatialRef();
  // GeoPackage stands in "Undefined geographic SRS" / "Undefined Cartesian
  // SRS" (srs_id 0 / -1) for a missing CRS; they state no unit.
  const std::string name = srs && srs->GetName() ? srs->GetName() : "";
  if (name.rfind("Undefined ", 0) == 0) srs = nullptr;
  if (!srs) {
    if (config.length_unit_m) {
      metric.metres_per_unit = *config.length_unit_m;
      return LineLength::planar(*config.length_unit_m);
    }
    throw InputError(where, "the layer has no coordinate reference system; set network.length_unit "
                            "in the config to state the coordinate unit");
  }
  char* wkt = nullptr;
  srs->exportToWkt(&wkt);
  table.crs_wkt = wkt ? wkt : "";
  CPLFree(wkt);
  if (!srs->IsGeographic()) {
    // Metres per CRS unit (0.3048 for a foot CRS, 1200/3937 for a US survey foot one).
    metric.metres_per_unit = srs->GetLinearUnits(nullptr);
    return LineLength::planar(metric.metres_per_unit);
  }
  table.geographic = true;
  OGRErr err = OGRERR_NONE;
  const double a = srs->GetSemiMajor(&err);
  const double inv_f = srs->GetInvFlattening(&err);
  const double f = inv_f > 0 ? 1.0 / inv_f : 0.0;  // 0 = sphere
  const double deg = srs->GetAngularUnits(nullptr) * 180.0 / M_PI;
  // Which data axis is latitude depends on the layer's axis mapping
  // (GDAL vector layers normally use OAMS_TRADITIONAL_GIS_ORDER: lon, lat).
  const auto& mapping = srs->GetDataAxisToSRSAxisMapping();
  OGRAxisOrientation orient = OAO_East;
  const int first_axis = mapping.empty() ? 1 : std::abs(mapping.front());
  srs->GetAxis(nullptr, first_axis - 1, &orient);
  const bool lat_first = orient == OAO_North || orient == OAO_South;
  if (!(a > 0) || !(f >= 0 && f < 1) || !(deg > 0))
    throw InputError(where, "the geographic CRS has no usable ellipsoid or angular unit");
  metric.geographic = true;
  metric.a_m = a;
  metric.f = f;
  metric.degrees_per_unit = deg;
  metric.lat_first = lat_first;
  return LineLength::geodesic(a, f, deg, lat_first);
}

std::vector<Point3> points(const OGRSimpleCurve& c) {
  std::vector<Point3> out(static_cast<std::size_t>(std::max(0, c.getNumPoints())));
  const bool z = c.Is3D();
  for (int i = 0; i < c.getNumPoints(); ++i) {
    out[i] = {c.getX(i), c.getY(i), z ? c.getZ(i) : ReachRecord::kUnset};
  }
  return out;
}

bool finiteLine(const std::vector<Point3>& line) {
  for (const auto& p : line)
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) return false;
  return true;
}

/// Fills r.line from the feature's geometry; false (with a problem) when unusable.
bool readGeometry(const OGRGeometry* geom, ReachRecord& r, ProblemList& problems) {
  auto fail = [&](ProblemCode code, const std::string& msg) {
    problems.push_back(reachProblem(code, r, msg + "; feature skipped"));
    return false;
  };
  if (!geom || geom->IsEmpty()) return fail(ProblemCode::EmptyGeometry, "the feature has no geometry");
  std::unique_ptr<OGRGeometry> linear;
  if (geom->hasCurveGeometry()) {
    linear.reset(geom->getLinearGeometry());
    geom = linear.get();
    if (!geom) return fail(ProblemCode::NonLineGeometry, "the curve geometry cannot be linearised");
  }
  std::vector<std::vector<Point3>> parts;
  const auto type = wkbFlatten(geom->getGeometryType());
  if (type == wkbLineString) {
    parts.push_back(points(*geom->toLineString()));
  } else if (type == wkbMultiLineString) {
    for (const OGRLineString* part : *geom->toMultiLineString())
      if (part && part->getNumPoints() > 0) parts.push_back(points(*part));
  } else {
    return fail(ProblemCode::NonLineGeometry,
                fmt::format("the geometry is a {}, not a line", geom->getGeometryName()));
  }
  for (const auto& p : parts) {
    if (!finiteLine(p)) return fail(ProblemCode::InvalidGeometry, "the line has non-finite coordinates");
    if (p.size() < 2) return fail(ProblemCode::EmptyGeometry, "a line part has fewer than two vertices");
  }
  if (parts.empty()) return fail(ProblemCode::EmptyGeometry, "the line has no vertices");
  if (auto merged = network::geos::mergeLineParts(parts)) {
    r.line = std::move(*merged);
    return true;
  }
  // Keep the reach (its parts in stored order) so later checks still see it.
  for (const auto& p : parts) r.line.insert(r.line.end(), p.begin(), p.end());
  problems.push_back(reachProblem(
      ProblemCode::MultipartGap, r,
      fmt::format("the {} parts of the line do not join end to end", parts.size())));
  return true;
}

void readFeatures(OGRLayer& layer, const detail::ReachAttributes& attrs, const LineLength& measure,
                  ReachTable& table, ProblemList& problems, ReadSummary& summary) {
  std::unordered_set<std::string> seen;
  // Room for every feature at once where the source knows its count without
  // a scan (a GeoPackage does): a million records grown by doubling were
  // moved about once more each, into freshly faulted pages.
  const GIntBig count = layer.GetFeatureCount(/*bForce=*/FALSE);
  if (count > 0) {
    table.reaches.reserve(static_cast<std::size_t>(count));
    seen.reserve(static_cast<std::size_t>(count));
  }
  layer.ResetReading();
  for (const auto& f : layer) {
    ++summary.features;
    ReachRecord r;
    r.fid = f->GetFID();
    const std::size_t first_problem = problems.size();
    bool keep = readGeometry(f->GetGeometryRef(), r, problems);
    if (keep) {
      r.geometry_length_m = measure(r.line);
      if (std::isnan(r.geometry_length_m)) {
        problems.push_back(reachProblem(
            ProblemCode::InvalidGeometry, r,
            "coordinates are not valid latitude/longitude for the geographic CRS; feature skipped"));
        keep = false;
      } else if (std::isinf(r.geometry_length_m)) {
        problems.push_back(reachProblem(ProblemCode::NonFiniteLength, r,
                                        "the line's length is not a finite number (its coordinates are too far "
                                        "apart); feature skipped"));
        keep = false;
      } else if (!(r.geometry_length_m > 0))
        problems.push_back(reachProblem(ProblemCode::ZeroLength, r,
                                                 "the line has zero length"));
    }
    const bool has_id = attrs.read(*f, r, problems);
    // Geometry problems were found before the id was known.
    for (std::size_t k = first_problem; k < problems.size(); ++k)
      if (problems[k].reach_id.empty()) problems[k].reach_id = r.id;
    if (keep && has_id && !seen.insert(r.id).second) {
      problems.push_back(reachProblem(
          ProblemCode::DuplicateId, r,
          fmt::format("reach id {} is used by an earlier feature; feature skipped", r.id)));
      keep = false;
    }
    if (keep && has_id)
      table.reaches.push_back(std::move(r));
    else
      ++summary.skipped;
  }
}

bool useGeometryTopology(const NetworkConfig& config, bool has_field, const InputLocation& where) {
  switch (config.topology) {
    case TopologySource::Geometry:
      return true;
    case TopologySource::Ids:
      if (!has_field) {
        InputLocation w = where;
        w.field = config.field("to_reach").name;
        throw InputError(w, "topology = \"ids\" but the layer has no such field");
      }
      return false;
    case TopologySource::Auto:
      break;
  }
  return !has_field;
}

}  // namespace

std::vector<std::string> lineLayers(const std::string& source) {
  auto ds = openSource(source);
  return lineLayerNames(*ds);
}

/// Line ends without Z take the DEM's elevation there; returns how many
/// lines got both. An end outside the DEM or on nodata stays without Z
/// (the line keeps its digitised direction), reported as `dem_nodata`.
std::size_t endElevationsFromDem(ReachTable& table, const std::string& dem_path, ProblemList& problems) {
  const terrain::Dem dem(dem_path);
  std::size_t filled = 0;
  for (auto& r : table.reaches) {
    if (r.line.size() < 2 || (std::isfinite(r.line.front().z) && std::isfinite(r.line.back().z))) continue;
    // The two ends only: a spacing longer than the line samples nothing between.
    const std::vector<Point3> ends{r.line.front(), r.line.back()};
    const auto samples = dem.profile(ends, 1.0, table.crs_wkt, 10.0);
    if (samples.size() < 2 || !samples.front().valid || !samples.back().valid) {
      problems.push_back(reachProblem(ProblemCode::DemNodata, r,
                                      "an end of the line has no DEM elevation, so the DEM cannot orient it"));
      continue;
    }
    r.line.front().z = samples.front().elevation_m;
    r.line.back().z = samples.back().elevation_m;
    ++filled;
  }
  return filled;
}

/// `[[network.connect]]` with topology from ids: the `from` reach, which
/// must have no downstream reach, flows into the `to` reach.
void connectByIds(ReachTable& table, const NetworkConfig& config, ProblemList& problems) {
  for (std::size_t k = 0; k < config.connections.size(); ++k) {
    const auto& c = config.connections[k];
    InputLocation w;
    w.file = config.origin.empty() ? table.source : config.origin;
    w.field = fmt::format("network.connect[{}].to", k + 1);
    if (c.to_point)
      throw InputError(w, "a point target needs topology from geometry; with to_reach ids "
                          "name the downstream reach");
    auto it = std::find_if(table.reaches.begin(), table.reaches.end(),
                           [&](const auto& r) { return r.id == c.from; });
    if (it->to_reach && !it->to_reach->empty())
      throw InputError(w, fmt::format("reach {} already flows into {} (to_reach)", c.from,
                                      *it->to_reach));
    it->to_reach = c.to_reach;
    problems.push_back(network::reachProblem(
        ProblemCode::AddedConnection, *it,
        fmt::format("reach {} flows into {} (network.connect)", c.from, c.to_reach)));
  }
}

ReachTable readNetwork(const std::string& source, const ReadOptions& options,
                       ProblemList& problems, ReadSummary* summary_out) {
  const NetworkConfig& config = options.config;
  auto ds = openSource(source);
  OGRLayer* layer =
      chooseLayer(*ds, options.layer.empty() ? config.layer : options.layer, source);
  ReachTable table;
  table.source = source;
  table.layer = layer->GetName();
  InputLocation where;
  where.file = source;
  where.layer = table.layer;
  network::geos::CrsMetric metric;
  const LineLength measure = lengthMeasure(*layer, config, where, table, metric);
  const detail::ReachAttributes attrs(*layer->GetLayerDefn(), config, where, options.derive_attributes);
  ReadSummary summary;
  readFeatures(*layer, attrs, measure, table, problems, summary);
  if (summary.features == 0) {
    problems.emplace_back(ProblemCode::EmptyLayer,
                          fmt::format("layer {} of {} has no features", table.layer, source));
  }
  table.has_to_reach = attrs.hasField("to_reach");
  // Ids named in the run file must be reaches of the layer (the pieces a
  // line is cut into come later and keep the line's id as a prefix).
  auto requireReach = [&](const std::string& id, const std::string& key) {
    const bool found = std::any_of(table.reaches.begin(), table.reaches.end(),
                                   [&](const auto& r) { return r.id == id; });
    if (found) return;
    InputLocation w;
    w.file = config.origin.empty() ? source : config.origin;
    w.field = key;
    throw InputError(w, fmt::format("reach {} is not in layer {} of {}", id, table.layer, source));
  };
  for (const auto& id : config.unconnected) requireReach(id, "network.unconnected");
  for (std::size_t k = 0; k < config.connections.size(); ++k) {
    const auto& c = config.connections[k];
    const std::string key = fmt::format("network.connect[{}]", k + 1);
    requireReach(c.from, key + ".from");
    if (!c.to_point) requireReach(c.to_reach, key + ".to");
  }
  if (useGeometryTopology(config, table.has_to_reach, where)) {
    network::geos::TopologyOptions topo;
    topo.snap_tolerance_m = config.snap_tolerance_m;
    topo.gap_search_m = config.gap_search_m.value_or(10.0 * config.snap_tolerance_m);
    topo.crs = metric;
    topo.line_length_m = [&measure](const std::vector<Point3>& line) { return measure(line); };
    topo.orientation = config.orientation;
    topo.outlets = config.outlets;
    topo.gaps_are_errors = config.gaps_are_errors;
    topo.unconnected = config.unconnected;
    topo.connections = config.connections;
    if (!options.dem.empty() && config.orientation == network::geos::Orientation::Elevation)
      summary.ends_from_dem = endElevationsFromDem(table, options.dem, problems);
    summary.topology_from_geometry = true;
    summary.snap_tolerance_m = topo.snap_tolerance_m;
    summary.gap_search_m = topo.gap_search_m;
    summary.topology = network::geos::buildTopologyFromGeometry(table, topo, problems);
  } else {
    connectByIds(table, config, problems);
  }
  if (summary_out) *summary_out = summary;
  return table;
}

}  // namespace reachwise::io
