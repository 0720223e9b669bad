#include "reachwise/io/LakeReader.hpp"

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/PolygonArea.hpp>
#include <fmt/core.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <set>
#include <sstream>

#include "GdalSupport.hpp"
#include "reachwise/io/CsvRecords.hpp"
#include "reachwise/io/Gdal.hpp"

namespace reachwise::io {

using network::LakeRecord;
using network::LakeTable;
using network::Point2;

namespace {

bool isPolygonType(OGRwkbGeometryType t) {
  switch (wkbFlatten(t)) {
    case wkbPolygon:
    case wkbMultiPolygon:
    case wkbCurvePolygon:
    case wkbMultiSurface:
      return true;
    default:
      return false;
  }
}

OGRLayer* chooseLakeLayer(GDALDataset& ds, const std::string& wanted, const InputLocation& where) {
  std::string all, polygons;
  std::vector<OGRLayer*> found;
  for (OGRLayer* layer : ds.GetLayers()) {
    all += (all.empty() ? "" : ", ") + std::string(layer->GetName());
    if (isPolygonType(layer->GetGeomType())) {
      found.push_back(layer);
      polygons += (polygons.empty() ? "" : ", ") + std::string(layer->GetName());
    }
  }
  if (!wanted.empty()) {
    if (OGRLayer* layer = ds.GetLayerByName(wanted.c_str())) return layer;
    throw InputError(where, fmt::format("no layer named {}; layers: {}", wanted, all.empty() ? "(none)" : all));
  }
  if (found.size() == 1) return found.front();
  if (found.size() > 1)
    throw InputError(where, fmt::format("several polygon layers ({}); choose one (lakes_layer)", polygons));
  if (ds.GetLayerCount() == 1 && wkbFlatten(ds.GetLayer(0)->GetGeomType()) == wkbUnknown) return ds.GetLayer(0);
  throw InputError(where, fmt::format("no polygon layer; layers: {}", all.empty() ? "(none)" : all));
}

/// A number field of the feature: unset when the field is absent or null.
/// Text that is not a number is an InputError at `where` (field set).
std::optional<double> number(OGRFeature& f, const char* name, InputLocation where) {
  const int i = f.GetFieldIndex(name);
  if (i < 0 || !f.IsFieldSetAndNotNull(i)) return std::nullopt;
  where.field = name;
  const OGRFieldType t = f.GetFieldDefnRef(i)->GetType();
  double v = 0;
  if (t == OFTReal || t == OFTInteger || t == OFTInteger64) {
    v = f.GetFieldAsDouble(i);
  } else {
    const std::string text = f.GetFieldAsString(i);
    char* end = nullptr;
    v = std::strtod(text.c_str(), &end);
    if (text.empty() || end == text.c_str() || *end != '\0')
      throw InputError(where, fmt::format("\"{}\" is not a number", text));
  }
  if (!std::isfinite(v)) throw InputError(where, "is not a finite number");
  return v;
}

std::optional<std::string> text(OGRFeature& f, const char* name) {
  const int i = f.GetFieldIndex(name);
  if (i < 0 || !f.IsFieldSetAndNotNull(i)) return std::nullopt;
  std::string v = f.GetFieldAsString(i);
  const auto b = v.find_first_not_of(" \t"), e = v.find_last_not_of(" \t");
  if (b == std::string::npos) return std::string();
  return v.substr(b, e - b + 1);
}

void addRing(const OGRLinearRing& ring, std::vector<std::vector<Point2>>& rings) {
  std::vector<Point2> pts;
  for (int i = 0; i < ring.getNumPoints(); ++i) pts.push_back({ring.getX(i), ring.getY(i)});
  if (pts.size() > 1 && pts.front().x == pts.back().x && pts.front().y == pts.back().y) pts.pop_back();
  if (pts.size() >= 3) rings.push_back(std::move(pts));
}

/// Geodesic area (m^2) of one ring on the ellipsoid (Karney 2013, as
/// implemented by GeographicLib): magnitude, whatever the ring's direction.
double geodesicRingArea(const OGRLinearRing& ring, const GeographicLib::Geodesic& geod, double deg,
                        bool lat_first) {
  GeographicLib::PolygonArea poly(geod);
  int n = ring.getNumPoints();
  if (n > 1 && ring.getX(n - 1) == ring.getX(0) && ring.getY(n - 1) == ring.getY(0)) --n;  // closed
  for (int i = 0; i < n; ++i) {
    const double a = ring.getX(i) * deg, b = ring.getY(i) * deg;
    poly.AddPoint(lat_first ? a : b, lat_first ? b : a);
  }
  double perimeter = 0, area = 0;
  poly.Compute(false, true, perimeter, area);
  return std::abs(area);
}

}  // namespace

routing::OutflowRule readOutflowTable(const std::string& path) {
  InputLocation where;
  where.file = path;
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(where, "cannot open the outflow table");
  std::stringstream buf;
  buf << in.rdbuf();
  const auto records = parseCsvRecords(buf.str(), path);
  if (records.empty()) throw InputError(where, "the outflow table is empty");
  const auto& head = records.front();
  where.line = head.line;
  if (head.fields.size() != 2)
    throw InputError(where, "expected two columns: level_m or storage_m3, then outflow_m3s");
  const std::string first(trimCsvField(head.fields[0])), second(trimCsvField(head.fields[1]));
  if ((first != "level_m" && first != "storage_m3") || second != "outflow_m3s")
    throw InputError(where, fmt::format("header \"{},{}\": expected level_m,outflow_m3s or storage_m3,outflow_m3s",
                                        first, second));
  std::vector<double> x, q;
  for (std::size_t r = 1; r < records.size(); ++r) {
    where.line = records[r].line;
    if (records[r].fields.size() != 2) throw InputError(where, "expected two values");
    for (std::size_t c = 0; c < 2; ++c) {
      const std::string v(trimCsvField(records[r].fields[c]));
      char* end = nullptr;
      const double d = std::strtod(v.c_str(), &end);
      if (v.empty() || *end != '\0' || !std::isfinite(d)) {
        where.field = c == 0 ? first : second;
        throw InputError(where, fmt::format("\"{}\" is not a number", v));
      }
      (c == 0 ? x : q).push_back(d);
    }
  }
  return first == "level_m" ? routing::OutflowRule::levelTable(std::move(x), std::move(q))
                            : routing::OutflowRule::storageTable(std::move(x), std::move(q));
}

LakeTable readLakes(const std::string& source, const LakeReadOptions& options) {
  ensureGdal();
  InputLocation where;
  where.file = source;
  CPLErrorReset();
  GDALDatasetUniquePtr ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) throwWithGdalMessage(where, "cannot open the lakes as vector data");
  OGRLayer* layer = chooseLakeLayer(*ds, options.layer, where);
  where.layer = layer->GetName();

  LakeTable table;
  table.source = source;
  table.layer = layer->GetName();

  // The CRS: the network's, and the unit of areas.
  const OGRSpatialReference* srs = layer->GetSpatialRef();
  const std::string srs_name = srs && srs->GetName() ? srs->GetName() : "";
  if (srs_name.rfind("Undefined ", 0) == 0) srs = nullptr;
  if (srs && !options.network_crs_wkt.empty()) {
    OGRSpatialReference net;
    net.importFromWkt(options.network_crs_wkt.c_str());
    if (!srs->IsSame(&net))
      throw InputError(where, fmt::format("the lakes' CRS ({}) is not the network's ({}); reproject the lakes",
                                          srs_name, net.GetName() ? net.GetName() : "?"));
  }
  bool geographic = false;
  double deg = 1;
  bool lat_first = false;
  std::unique_ptr<GeographicLib::Geodesic> geod;
  if (!srs) {
    if (!options.length_unit_m)
      throw InputError(where, "the lakes layer has no coordinate reference system; set network.length_unit");
    table.metres_per_unit = *options.length_unit_m;
  } else if (!srs->IsGeographic()) {
    table.metres_per_unit = srs->GetLinearUnits(nullptr);
  } else {
    geographic = true;
    table.metres_per_unit = 111320.0;  // nominal, for tolerances (LineLength::metresPerUnit)
    OGRErr err = OGRERR_NONE;
    const double a = srs->GetSemiMajor(&err), inv_f = srs->GetInvFlattening(&err);
    deg = srs->GetAngularUnits(nullptr) * 180.0 / M_PI;
    const auto& mapping = srs->GetDataAxisToSRSAxisMapping();
    OGRAxisOrientation orient = OAO_East;
    srs->GetAxis(nullptr, (mapping.empty() ? 1 : std::abs(mapping.front())) - 1, &orient);
    lat_first = orient == OAO_North || orient == OAO_South;
    geod = std::make_unique<GeographicLib::Geodesic>(a, inv_f > 0 ? 1.0 / inv_f : 0.0);
  }
  if (layer->GetLayerDefn()->GetFieldIndex("lake_id") < 0) {
    where.field = "lake_id";
    throw InputError(where, "the lakes layer has no lake_id field");
  }

  std::set<std::string> seen;
  const auto dir = std::filesystem::path(source).parent_path();
  layer->ResetReading();
  for (auto& feature : *layer) {
    InputLocation at = where;
    at.fid = feature->GetFID();
    const auto id = text(*feature, "lake_id");
    if (!id || id->empty()) {
      at.field = "lake_id";
      throw InputError(at, "the lake has no id");
    }
    at.lake_id = *id;
    if (!seen.insert(*id).second) {
      at.field = "lake_id";
      throw InputError(at, "the id of an earlier lake");
    }
    LakeRecord lake;
    lake.lake_id = *id;
    lake.fid = feature->GetFID();

    // Geometry: polygons only; curves made linear.
    const OGRGeometry* g = feature->GetGeometryRef();
    if (!g || g->IsEmpty()) throw InputError(at, "the lake has no geometry");
    std::unique_ptr<OGRGeometry> linear(g->hasCurveGeometry() ? g->getLinearGeometry() : g->clone());
    std::vector<const OGRPolygon*> polys;
    const auto flat = wkbFlatten(linear->getGeometryType());
    if (flat == wkbPolygon) {
      polys.push_back(linear->toPolygon());
    } else if (flat == wkbMultiPolygon) {
      for (const auto* p : *linear->toMultiPolygon()) polys.push_back(p);
    } else {
      throw InputError(at, fmt::format("the geometry is a {}, not a polygon", OGRGeometryTypeToName(flat)));
    }
    double area = 0;
    for (const OGRPolygon* p : polys) {
      if (p->IsEmpty()) continue;
      for (int r = 0; r <= p->getNumInteriorRings(); ++r) {
        const OGRLinearRing* ring = r == 0 ? p->getExteriorRing() : p->getInteriorRing(r - 1);
        addRing(*ring, lake.rings);
        if (geographic) {
          const double a = geodesicRingArea(*ring, *geod, deg, lat_first);
          area += r == 0 ? a : -a;
        }
      }
      if (!geographic) area += p->get_Area() * table.metres_per_unit * table.metres_per_unit;
    }
    for (const auto& ring : lake.rings)
      for (const auto& pt : ring)
        if (!std::isfinite(pt.x) || !std::isfinite(pt.y)) throw InputError(at, "a vertex is not finite");
    if (lake.rings.empty()) throw InputError(at, "the polygon has no ring of three or more vertices");
    lake.area_m2 = area;
    lake.wkt = linear->exportToWkt();

    // The outflow rule: exactly one of weir, table, linear reservoir.
    const auto crest = number(*feature, "crest_level_m", at);
    const auto length = number(*feature, "weir_length_m", at);
    const auto coef = number(*feature, "weir_coefficient", at);
    const auto k_h = number(*feature, "k_h", at);
    const auto table_file = text(*feature, "outflow_table");
    const int rules = (crest || length ? 1 : 0) + (k_h ? 1 : 0) + (table_file && !table_file->empty() ? 1 : 0);
    if (rules == 0) {
      at.field = "crest_level_m";
      throw InputError(at, "no outflow rule: give crest_level_m and weir_length_m (a weir), outflow_table "
                           "(a CSV of level_m or storage_m3 against outflow_m3s), or k_h (a linear reservoir)");
    }
    if (rules > 1) {
      at.field = k_h ? "k_h" : "outflow_table";
      throw InputError(at, "more than one outflow rule (a weir, outflow_table, k_h): give one");
    }
    if (k_h) {
      lake.rule = routing::OutflowRule::linear(*k_h * 3600.0);
    } else if (table_file && !table_file->empty()) {
      std::filesystem::path p(*table_file);
      if (p.is_relative()) p = dir / p;
      at.field = "outflow_table";
      try {
        lake.rule = readOutflowTable(p.string());
      } catch (const InputError& e) {
        throw InputError(at, e.what());
      }
      at.field.clear();
    } else {
      if (!crest || !length) {
        at.field = crest ? "weir_length_m" : "crest_level_m";
        throw InputError(at, "a weir needs both crest_level_m and weir_length_m");
      }
      lake.rule = routing::OutflowRule::weir(*crest, *length, coef.value_or(routing::kBroadCrestedWeirCoefficient));
    }
    lake.initial_level_m = number(*feature, "initial_level_m", at);
    lake.bottom_level_m = number(*feature, "bottom_level_m", at).value_or(0.0);
    try {
      (void)lake.levelPool();  // checks the rule against the lake
      if (lake.initial_level_m) {
        const double bottom = lake.rule.kind == routing::OutflowRule::Kind::Weir ? lake.rule.crest_level_m
                                                                                 : lake.bottom_level_m;
        if (*lake.initial_level_m < bottom)
          throw InvalidParameter("initial_level_m", fmt::format("{} m lies below the lake's empty level {} m",
                                                                *lake.initial_level_m, bottom));
      }
    } catch (const InvalidParameter& e) {
      at.field = e.quantity() == "area_m2" ? "" : e.quantity();
      throw InputError(at, e.what());
    }
    table.lakes.push_back(std::move(lake));
  }
  if (table.lakes.empty()) throw InputError(where, "the lakes layer has no features");
  return table;
}

}  // namespace reachwise::io
