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
#include <map>
#include <set>
#include <string_view>
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

std::optional<std::string> text(OGRFeature& f, const char* name) { return trimmedText(f, name); }

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

namespace {

/// A CSV of numbers under a header: one vector per column, the line of
/// every row.
struct NumberCsv {
  std::vector<std::string> names;
  std::vector<std::vector<double>> columns;
  std::vector<std::int64_t> lines;
  std::int64_t header_line = 0;
};

NumberCsv readNumberCsv(const std::string& path, const char* what) {
  InputLocation where;
  where.file = path;
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(where, fmt::format("cannot open the {}", what));
  std::stringstream buf;
  buf << in.rdbuf();
  const auto records = parseCsvRecords(buf.str(), path);
  if (records.empty()) throw InputError(where, fmt::format("the {} is empty", what));
  NumberCsv csv;
  csv.header_line = records.front().line;
  for (const auto& f : records.front().fields) csv.names.emplace_back(trimCsvField(f));
  csv.columns.resize(csv.names.size());
  for (std::size_t r = 1; r < records.size(); ++r) {
    where.line = records[r].line;
    if (records[r].fields.size() != csv.names.size())
      throw InputError(where, fmt::format("expected {} values, found {}", csv.names.size(), records[r].fields.size()));
    for (std::size_t c = 0; c < csv.names.size(); ++c) {
      const std::string v(trimCsvField(records[r].fields[c]));
      char* end = nullptr;
      const double d = std::strtod(v.c_str(), &end);
      if (v.empty() || *end != '\0' || !std::isfinite(d)) {
        where.field = csv.names[c];
        throw InputError(where, fmt::format("\"{}\" is not a number", v));
      }
      csv.columns[c].push_back(d);
    }
    csv.lines.push_back(records[r].line);
  }
  return csv;
}

/// The level–storage relation of column `level` and column `value` (storage
/// in m^3, or surface area in m^2 when `area`), checked row by row: levels
/// increasing, values not negative, storage 0 at the first level and
/// increasing. Areas become storage by the trapezoidal rule, exact where
/// the area is linear in level between rows (Chow, Maidment & Mays 1988,
/// *Applied Hydrology* §8.2, builds the elevation–storage curve the same
/// way from the areas of contours).
void levelStorageColumns(const NumberCsv& csv, std::size_t level, std::size_t value, bool area,
                         const std::string& path, std::vector<double>& level_m, std::vector<double>& storage_m3) {
  InputLocation where;
  where.file = path;
  const auto& h = csv.columns[level];
  const auto& v = csv.columns[value];
  if (h.size() < 2) {
    where.line = csv.header_line;
    throw InputError(where, fmt::format("the level–{} relation needs at least two rows", area ? "area" : "storage"));
  }
  level_m.assign(h.begin(), h.end());
  storage_m3.assign(h.size(), 0.0);
  for (std::size_t i = 0; i < h.size(); ++i) {
    where.line = csv.lines[i];
    where.field = csv.names[value];
    if (v[i] < 0) throw InputError(where, fmt::format("{} {} is negative", csv.names[value], v[i]));
    if (i == 0) {
      if (!area && v[0] != 0)
        throw InputError(where, fmt::format("the first storage must be 0 (the empty lake's level), got {}", v[0]));
      continue;
    }
    where.field = csv.names[level];
    if (!(h[i] > h[i - 1]))
      throw InputError(where, fmt::format("levels must increase: {} after {}", h[i], h[i - 1]));
    storage_m3[i] = area ? storage_m3[i - 1] + 0.5 * (v[i - 1] + v[i]) * (h[i] - h[i - 1]) : v[i];
    if (!(storage_m3[i] > storage_m3[i - 1])) {
      where.field = csv.names[value];
      throw InputError(where, area ? fmt::format("the area is 0 from level {} to {}: storage must increase",
                                                 h[i - 1], h[i])
                                   : fmt::format("storage must increase: {} after {}", v[i], v[i - 1]));
    }
  }
}

}  // namespace

OutflowTableFile readOutflowTableFile(const std::string& path) {
  const NumberCsv csv = readNumberCsv(path, "outflow table");
  InputLocation where;
  where.file = path;
  where.line = csv.header_line;
  const auto& n = csv.names;
  const bool by_level = !n.empty() && n[0] == "level_m";
  const bool header_ok = (n.size() == 2 || n.size() == 3) && (by_level || n[0] == "storage_m3") &&
                         n[1] == "outflow_m3s" && (n.size() == 2 || (by_level && (n[2] == "area_m2" || n[2] == "storage_m3")));
  if (!header_ok) {
    std::string head;
    for (const auto& name : n) head += (head.empty() ? "" : ",") + name;
    throw InputError(where, fmt::format("header \"{}\": expected level_m,outflow_m3s or storage_m3,outflow_m3s, "
                                        "optionally level_m,outflow_m3s,area_m2 or level_m,outflow_m3s,storage_m3",
                                        head));
  }
  OutflowTableFile out;
  out.rule = by_level ? routing::OutflowRule::levelTable(csv.columns[0], csv.columns[1])
                      : routing::OutflowRule::storageTable(csv.columns[0], csv.columns[1]);
  if (n.size() == 3) levelStorageColumns(csv, 0, 2, n[2] == "area_m2", path, out.level_m, out.storage_m3);
  return out;
}

routing::OutflowRule readOutflowTable(const std::string& path) { return readOutflowTableFile(path).rule; }

void readStorageTable(const std::string& path, std::vector<double>& level_m, std::vector<double>& storage_m3) {
  const NumberCsv csv = readNumberCsv(path, "storage table");
  const auto& n = csv.names;
  if (n.size() != 2 || n[0] != "level_m" || (n[1] != "storage_m3" && n[1] != "area_m2")) {
    InputLocation where;
    where.file = path;
    where.line = csv.header_line;
    std::string head;
    for (const auto& name : n) head += (head.empty() ? "" : ",") + name;
    throw InputError(where, fmt::format("header \"{}\": expected level_m,storage_m3 or level_m,area_m2", head));
  }
  levelStorageColumns(csv, 0, 1, n[1] == "area_m2", path, level_m, storage_m3);
}

LakeTable readLakes(const std::string& source, const LakeReadOptions& options) {
  ensureGdal();
  InputLocation where;
  where.file = source;
  CPLErrorReset();
  recoverHotJournal(source);  // a killed writer's journal would make the open fail
  CPLErrorReset();
  GDALDatasetUniquePtr ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) throwWithGdalMessage(where, "cannot open the lakes as vector data");
  OGRLayer* layer = chooseLayer(*ds, options.layer, where, isPolygonType, "polygon", "lakes_layer");
  where.layer = layer->GetName();

  LakeTable table;
  table.source = source;
  table.layer = layer->GetName();

  // The CRS: the network's, and the unit of areas.
  const OGRSpatialReference* srs = layerCrsMatching(*layer, options.network_crs_wkt, where, "the lakes");
  const LayerMetric metric = layerMetric(srs, options.length_unit_m, where, "the lakes layer");
  table.metres_per_unit = metric.metres_per_unit;
  const bool geographic = metric.geographic, lat_first = metric.lat_first;
  const double deg = metric.degrees_per_unit;
  std::unique_ptr<GeographicLib::Geodesic> geod;
  if (geographic) geod = std::make_unique<GeographicLib::Geodesic>(metric.semi_major_m, metric.flattening);
  // Source field of each attribute ([network.lake_fields]) and its default.
  std::map<std::string, FieldSpec, std::less<>> fields;
  for (auto name : kLakeFieldNames) {
    const auto it = options.fields.find(name);
    FieldSpec spec = it != options.fields.end() ? it->second : FieldSpec{};
    if (spec.name.empty()) spec.name = std::string(name);
    const bool mapped = spec.name != name;
    if (mapped && !spec.hasDefault() && layer->GetLayerDefn()->GetFieldIndex(spec.name.c_str()) < 0) {
      InputLocation at = where;
      at.field = spec.name;
      throw InputError(at, fmt::format("the lakes layer has no field {} (network.lake_fields.{})", spec.name, name));
    }
    fields.emplace(std::string(name), std::move(spec));
  }
  const auto source_of = [&](std::string_view canonical) -> const std::string& {
    return fields.find(canonical)->second.name;
  };
  const std::string& id_field = source_of("lake_id");
  if (layer->GetLayerDefn()->GetFieldIndex(id_field.c_str()) < 0) {
    where.field = id_field;
    throw InputError(where, fmt::format("the lakes layer has no {} field", id_field));
  }

  std::set<std::string> seen;
  const auto dir = std::filesystem::path(source).parent_path();
  const auto resolve = [&](const std::string& file) {
    std::filesystem::path p(file);
    if (p.is_relative()) p = dir / p;
    return p.string();
  };
  layer->ResetReading();
  for (auto& feature : *layer) {
    InputLocation at = where;
    at.fid = feature->GetFID();
    // The feature's own value of an attribute, and the value with the default.
    const auto own = [&](std::string_view canonical) { return number(*feature, source_of(canonical).c_str(), at); };
    const auto ownText = [&](std::string_view canonical) {
      auto v = text(*feature, source_of(canonical).c_str());
      return v && !v->empty() ? v : std::nullopt;
    };
    const auto orDefault = [&](std::optional<double> v, std::string_view canonical) {
      return v ? v : fields.find(canonical)->second.default_number;
    };
    const auto textOrDefault = [&](std::optional<std::string> v, std::string_view canonical) {
      return v ? v : fields.find(canonical)->second.default_text;
    };
    const auto id = text(*feature, id_field.c_str());
    if (!id || id->empty()) {
      at.field = id_field;
      throw InputError(at, "the lake has no id");
    }
    at.lake_id = *id;
    if (!seen.insert(*id).second) {
      at.field = id_field;
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

    // The outflow rule: exactly one of weir, table, linear reservoir. The
    // lake's own fields choose it; defaults fill in the chosen rule, or give
    // the whole rule when the lake's own fields name none.
    auto crest = own("crest_level_m"), length = own("weir_length_m"), k_h = own("k_h");
    auto table_file = ownText("outflow_table");
    const bool own_weir = crest || length;
    if (!own_weir && !k_h && !table_file) {
      k_h = orDefault(k_h, "k_h");
      table_file = textOrDefault(table_file, "outflow_table");
    }
    if (!k_h && !table_file) {
      crest = orDefault(crest, "crest_level_m");
      length = orDefault(length, "weir_length_m");
    }
    const auto coef = orDefault(own("weir_coefficient"), "weir_coefficient");
    const int rules = (crest || length ? 1 : 0) + (k_h ? 1 : 0) + (table_file ? 1 : 0);
    if (rules == 0) {
      at.field = source_of("crest_level_m");
      throw InputError(at, fmt::format("no outflow rule: give {} and {} (a weir), {} (a CSV of level_m or "
                                       "storage_m3 against outflow_m3s), or {} (a linear reservoir)",
                                       source_of("crest_level_m"), source_of("weir_length_m"),
                                       source_of("outflow_table"), source_of("k_h")));
    }
    if (rules > 1) {
      at.field = source_of(k_h ? "k_h" : "outflow_table");
      throw InputError(at, fmt::format("more than one outflow rule (a weir, {}, {}): give one",
                                       source_of("outflow_table"), source_of("k_h")));
    }
    std::vector<double> table_level, table_storage;  // a level–storage relation, if any
    std::string storage_from;                         // the field that gave it
    if (k_h) {
      lake.rule = routing::OutflowRule::linear(*k_h * 3600.0);
    } else if (table_file) {
      at.field = source_of("outflow_table");
      try {
        auto file = readOutflowTableFile(resolve(*table_file));
        lake.rule = std::move(file.rule);
        table_level = std::move(file.level_m);
        table_storage = std::move(file.storage_m3);
      } catch (const InputError& e) {
        throw InputError(at, e.what());
      }
      if (!table_level.empty()) storage_from = source_of("outflow_table");
      at.field.clear();
    } else {
      if (!crest || !length) {
        at.field = source_of(crest ? "weir_length_m" : "crest_level_m");
        throw InputError(at, fmt::format("a weir needs both {} and {}", source_of("crest_level_m"),
                                         source_of("weir_length_m")));
      }
      lake.rule = routing::OutflowRule::weir(*crest, *length, coef.value_or(routing::kBroadCrestedWeirCoefficient));
    }
    if (const auto storage_file = textOrDefault(ownText("storage_table"), "storage_table")) {
      at.field = source_of("storage_table");
      if (!storage_from.empty())
        throw InputError(at, fmt::format("two level–storage relations: the third column of {} and {}; give one",
                                         source_of("outflow_table"), source_of("storage_table")));
      try {
        readStorageTable(resolve(*storage_file), table_level, table_storage);
      } catch (const InputError& e) {
        throw InputError(at, e.what());
      }
      storage_from = source_of("storage_table");
      at.field.clear();
    }
    lake.initial_level_m = orDefault(own("initial_level_m"), "initial_level_m");
    const auto bottom_level = orDefault(own("bottom_level_m"), "bottom_level_m");
    if (!table_level.empty()) {
      if (bottom_level && *bottom_level != table_level.front()) {
        at.field = source_of("bottom_level_m");
        throw InputError(at, fmt::format("{} m is not the first level of the level–storage relation in {} "
                                         "({} m), the lake's empty level; give one or make them agree",
                                         *bottom_level, storage_from, table_level.front()));
      }
      lake.bottom_level_m = table_level.front();
      lake.storage_level_m = std::move(table_level);
      lake.storage_m3 = std::move(table_storage);
    } else {
      lake.bottom_level_m = bottom_level.value_or(0.0);
    }
    try {
      (void)lake.levelPool();  // checks the rule against the lake
      if (lake.initial_level_m && *lake.initial_level_m < lake.emptyLevel())
        throw InvalidParameter("initial_level_m", fmt::format("{} m lies below the lake's empty level {} m",
                                                              *lake.initial_level_m, lake.emptyLevel()));
    } catch (const InvalidParameter& e) {
      const std::string& q = e.quantity();
      if (q == "area_m2") at.field.clear();
      else if (q == "level_storage") at.field = storage_from;
      else if (fields.count(q)) at.field = source_of(q);
      else at.field = q;
      throw InputError(at, e.what());
    }
    table.lakes.push_back(std::move(lake));
  }
  if (table.lakes.empty()) throw InputError(where, "the lakes layer has no features");
  return table;
}

}  // namespace reachwise::io
