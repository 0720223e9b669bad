#include "reachwise/io/PreparedWriter.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <map>
#include <memory>
#include <set>

#include "GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/ProblemsWriter.hpp"

namespace reachwise::io {

namespace {

using network::ReachGraph;

[[noreturn]] void fail(const std::string& path, const std::string& what) { throwWithGdalMessage(path, what); }

std::string lower(std::string s) {
  for (auto& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

/// Fields written by prepare besides the reach attributes.
constexpr const char* kProvenanceFields[] = {
    "slope_source",      "elevation_source",   "dem_raw_slope",       "dem_samples",
    "dem_valid_fraction", "dem_flags",         "drainage_area_km2",   "area_source",
    "bottom_width_source", "side_slope_source", "manning_n_source",   "bank_depth_source"};

/// Text provenance fields and their values.
struct TextField {
  const char* name;
  const std::string PreparedReach::*value;
};
const TextField kTextProvenance[] = {
    {"slope_source", &PreparedReach::slope_source},
    {"elevation_source", &PreparedReach::elevation_source},
    {"area_source", &PreparedReach::area_source},
    {"bottom_width_source", &PreparedReach::bottom_width_source},
    {"side_slope_source", &PreparedReach::side_slope_source},
    {"manning_n_source", &PreparedReach::manning_n_source},
    {"bank_depth_source", &PreparedReach::bank_depth_source},
};

/// Numeric attributes written under their canonical names, in SI units.
struct NumericAttribute {
  const char* name;
  double (*get)(const network::ReachRecord&);
};
const NumericAttribute kNumeric[] = {
    {"manning_n", [](const network::ReachRecord& r) { return r.section.manning_n; }},
    {"bottom_width", [](const network::ReachRecord& r) { return r.section.bottom_width_m; }},
    {"side_slope", [](const network::ReachRecord& r) { return r.section.side_slope; }},
    {"diameter", [](const network::ReachRecord& r) { return r.section.diameter_m; }},
    {"bank_depth", [](const network::ReachRecord& r) { return r.section.bank_depth_m; }},
    {"floodplain_width", [](const network::ReachRecord& r) { return r.section.floodplain_width_m; }},
    {"floodplain_n", [](const network::ReachRecord& r) { return r.section.floodplain_n; }},
    {"muskingum_k_h", [](const network::ReachRecord& r) { return r.muskingum_k_h; }},
    {"muskingum_x", [](const network::ReachRecord& r) { return r.muskingum_x; }},
    {"split", [](const network::ReachRecord& r) { return r.split; }},
    {"base_flow", [](const network::ReachRecord& r) { return r.base_flow_m3s; }},
};


void setNumber(OGRFeature& f, const char* name, double v) {
  if (std::isfinite(v))
    f.SetField(name, v);
  else
    f.SetFieldNull(f.GetFieldIndex(name));
}

void setText(OGRFeature& f, const char* name, const std::string& v) {
  if (v.empty())
    f.SetFieldNull(f.GetFieldIndex(name));
  else
    f.SetField(name, v.c_str());
}

/// The source layer, to copy the fields that hold no reach attribute.
struct SourceFeatures {
  GDALDatasetUniquePtr ds;
  OGRLayer* layer = nullptr;
  std::vector<int> copied;  ///< source field indexes copied, in order
  std::map<std::int64_t, std::unique_ptr<OGRFeature>> by_fid;
  bool has_length = false;  ///< the layer has the configured length field
};

SourceFeatures readSource(const ReachGraph& graph, const NetworkConfig& config) {
  const auto& table = graph.table();
  SourceFeatures s;
  s.ds.reset(GDALDataset::Open(table.source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!s.ds) throwWithGdalMessage(table.source, "cannot open the network again to copy its fields");
  s.layer = s.ds->GetLayerByName(table.layer.c_str());
  if (!s.layer) throwWithGdalMessage(table.source, "cannot open the layer again", table.layer);
  std::set<std::string> reserved = {"fid"};
  for (auto name : kFieldNames) {
    reserved.insert(lower(std::string(name)));
    reserved.insert(lower(config.field(name).name));
  }
  for (const char* name : kProvenanceFields) reserved.insert(name);
  OGRFeatureDefn* defn = s.layer->GetLayerDefn();
  for (int i = 0; i < defn->GetFieldCount(); ++i)
    if (!reserved.count(lower(defn->GetFieldDefn(i)->GetNameRef()))) s.copied.push_back(i);
  s.has_length = defn->GetFieldIndex(config.field("length").name.c_str()) >= 0;
  s.layer->ResetReading();
  for (auto& f : *s.layer) {
    const std::int64_t fid = f->GetFID();
    s.by_fid.emplace(fid, std::unique_ptr<OGRFeature>(f.release()));
  }
  return s;
}

void writeReaches(const std::string& path, GDALDataset& ds, OGRSpatialReference* srs, const ReachGraph& graph,
                  const NetworkConfig& config, const std::vector<PreparedReach>& prepared) {
  SourceFeatures source = readSource(graph, config);
  OGRLayer* layer = ds.CreateLayer("reaches", srs, wkbLineString, nullptr);
  if (!layer) fail(path, "cannot create layer reaches");
  OGRFeatureDefn* in_defn = source.layer->GetLayerDefn();
  std::vector<int> out_index;
  for (const int i : source.copied) {
    OGRFieldDefn copy(in_defn->GetFieldDefn(i));
    if (layer->CreateField(&copy) != OGRERR_NONE)
      fail(path, std::string("cannot add field ") + copy.GetNameRef());
    out_index.push_back(layer->GetLayerDefn()->GetFieldIndex(copy.GetNameRef()));
  }
  addLayerField(path, *layer, "reach_id", OFTString);
  addLayerField(path, *layer, "to_reach", OFTString);
  const bool lake_ids = std::any_of(graph.table().reaches.begin(), graph.table().reaches.end(),
                                    [](const network::ReachRecord& r) { return !r.lake_id.empty(); });
  if (lake_ids) addLayerField(path, *layer, "lake_id", OFTString);
  addLayerField(path, *layer, "slope", OFTReal);
  addLayerField(path, *layer, "up_elevation", OFTReal);
  addLayerField(path, *layer, "down_elevation", OFTReal);
  addLayerField(path, *layer, "shape", OFTString);
  for (const auto& a : kNumeric) addLayerField(path, *layer, a.name, OFTReal);
  if (source.has_length) addLayerField(path, *layer, "length", OFTReal);
  for (const auto& t : kTextProvenance) addLayerField(path, *layer, t.name, OFTString);
  addLayerField(path, *layer, "drainage_area_km2", OFTReal);
  addLayerField(path, *layer, "dem_raw_slope", OFTReal);
  addLayerField(path, *layer, "dem_samples", OFTInteger64);
  addLayerField(path, *layer, "dem_valid_fraction", OFTReal);
  addLayerField(path, *layer, "dem_flags", OFTString);

  for (ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const auto& r = graph.record(v);
    const PreparedReach& p = prepared[v];
    OGRFeature f(layer->GetLayerDefn());
    if (auto it = source.by_fid.find(r.fid); it != source.by_fid.end()) {
      for (std::size_t k = 0; k < source.copied.size(); ++k) {
        const int i = source.copied[k];
        if (it->second->IsFieldNull(i))
          f.SetFieldNull(out_index[k]);
        else if (it->second->IsFieldSet(i))
          f.SetField(out_index[k], it->second->GetRawFieldRef(i));
      }
    }
    f.SetField("reach_id", r.id.c_str());
    setText(f, "to_reach", r.to_reach.value_or(""));
    if (lake_ids) setText(f, "lake_id", r.lake_id);
    setNumber(f, "slope", p.slope);
    setNumber(f, "up_elevation", p.up_elevation_m);
    setNumber(f, "down_elevation", p.down_elevation_m);
    network::ReachRecord written = r;  // the attributes as prepared
    written.section = p.section;
    if (!std::isnan(p.muskingum_k_h)) written.muskingum_k_h = p.muskingum_k_h;
    if (!std::isnan(p.muskingum_x)) written.muskingum_x = p.muskingum_x;
    f.SetField("shape", p.section.shape == hydraulics::Shape::Circle ? "circle" : "trapezoid");
    for (const auto& a : kNumeric) setNumber(f, a.name, a.get(written));
    if (source.has_length) setNumber(f, "length", r.length_m);
    for (const auto& t : kTextProvenance) setText(f, t.name, p.*t.value);
    setNumber(f, "drainage_area_km2", p.drainage_area_km2);
    setNumber(f, "dem_raw_slope", p.dem_raw_slope);
    f.SetField("dem_samples", static_cast<GIntBig>(p.dem_samples));
    setNumber(f, "dem_valid_fraction",
              p.dem_samples ? static_cast<double>(p.dem_valid_samples) / static_cast<double>(p.dem_samples)
                            : std::nan(""));
    setText(f, "dem_flags", p.dem_flags);
    const auto& line = r.line;
    OGRLineString g;
    g.setNumPoints(static_cast<int>(line.size()));
    const bool reverse = graph.flipped(v);
    for (std::size_t i = 0; i < line.size(); ++i) {
      const auto& q = line[reverse ? line.size() - 1 - i : i];
      g.setPoint(static_cast<int>(i), q.x, q.y);
    }
    if (!line.empty()) f.SetGeometry(&g);
    if (layer->CreateFeature(&f) != OGRERR_NONE) fail(path, "cannot write reach " + r.id);
  }
}

}  // namespace

void writePreparedGeoPackage(const std::string& path, bool overwrite, const ReachGraph& graph,
                             const NetworkConfig& config, const std::vector<PreparedReach>& prepared,
                             const network::ProblemList& problems,
                             const std::function<void(GDALDataset&, OGRSpatialReference*)>& extra,
                             OutputCommit* into) {
  REACHWISE_ASSERT(prepared.size() == graph.size());
  ensureGdal();
  CPLErrorReset();
  refuseExisting(path, overwrite);
  const auto write = [&](const std::filesystem::path& tmp) {
    GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
    if (!driver) fail(path, "GDAL has no GeoPackage driver");
    std::unique_ptr<GDALDataset> ds(driver->Create(tmp.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
    if (!ds) fail(path, "cannot create the output file");
    const auto srs = spatialReferenceFromWkt(graph.table().crs_wkt);
    if (ds->StartTransaction() != OGRERR_NONE) fail(path, "cannot start writing");
    writeReaches(path, *ds, srs.get(), graph, config, prepared);
    addProblemsLayer(path, *ds, srs.get(), problems);
    if (extra) extra(*ds, srs.get());
    if (ds->CommitTransaction() != OGRERR_NONE) fail(path, "cannot finish writing");
    ds.reset();  // closed and flushed before the rename
  };
  if (into) writeStaged(path, ".gpkg", write, *into);
  else writeThenRename(path, ".gpkg", write, overwrite);
}

}  // namespace reachwise::io
