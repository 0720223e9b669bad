#include "reachwise/io/ProblemsWriter.hpp"

#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <memory>


#include "GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/network/Strahler.hpp"

namespace reachwise::io {

namespace {

using network::ReachGraph;

[[noreturn]] void fail(const std::string& path, const std::string& what) { throwWithGdalMessage(path, what); }


}  // namespace

const char* severityName(network::Severity s) {
  switch (s) {
    case network::Severity::Info: return "info";
    case network::Severity::Warning: return "warning";
    case network::Severity::Error: return "error";
  }
  return "error";
}

void addProblemsLayer(const std::string& path, GDALDataset& ds, OGRSpatialReference* srs,
                      const network::ProblemList& problems) {
  // The GeoPackage driver calls its key column "fid" by default, which would
  // swallow the field holding the source feature id.
  CPLStringList layer_options;
  layer_options.SetNameValue("FID", "problem_id");
  OGRLayer* layer = ds.CreateLayer("problems", srs, wkbPoint, layer_options.List());
  if (!layer) fail(path, "cannot create layer problems");
  addLayerField(path, *layer, "code", OFTString);
  addLayerField(path, *layer, "severity", OFTString);
  addLayerField(path, *layer, "reach_id", OFTString);
  addLayerField(path, *layer, "fid", OFTInteger64);
  addLayerField(path, *layer, "message", OFTString);
  addLayerField(path, *layer, "other_reach", OFTString);
  addLayerField(path, *layer, "distance_m", OFTReal);
  for (const auto& p : problems) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("code", std::string(p.codeName()).c_str());
    f.SetField("severity", severityName(p.severity));
    if (!p.reach_id.empty()) f.SetField("reach_id", p.reach_id.c_str());
    if (p.fid >= 0) f.SetField("fid", static_cast<GIntBig>(p.fid));
    f.SetField("message", p.message.c_str());
    if (!p.other_reach_id.empty()) f.SetField("other_reach", p.other_reach_id.c_str());
    if (std::isfinite(p.distance_m)) f.SetField("distance_m", p.distance_m);
    if (std::isfinite(p.x) && std::isfinite(p.y)) f.SetGeometry(std::make_unique<OGRPoint>(p.x, p.y).get());
    if (layer->CreateFeature(&f) != OGRERR_NONE) fail(path, "cannot write a problem");
  }
}

namespace {

OGRLineString flowLine(const ReachGraph& graph, ReachGraph::Vertex v) {
  const auto& line = graph.record(v).line;
  OGRLineString out;
  out.setNumPoints(static_cast<int>(line.size()));
  const bool reverse = graph.flipped(v);
  for (std::size_t i = 0; i < line.size(); ++i) {
    const auto& p = line[reverse ? line.size() - 1 - i : i];
    out.setPoint(static_cast<int>(i), p.x, p.y);
  }
  return out;
}

void writeNetworkLayer(const std::string& path, GDALDataset& ds, OGRSpatialReference* srs,
                       const ReachGraph& graph) {
  CPLStringList layer_options;
  layer_options.SetNameValue("FID", "row_id");
  OGRLayer* layer = ds.CreateLayer("network", srs, wkbLineString, layer_options.List());
  if (!layer) fail(path, "cannot create layer network");
  addLayerField(path, *layer, "reach_id", OFTString);
  addLayerField(path, *layer, "fid", OFTInteger64);
  addLayerField(path, *layer, "to_reach", OFTString);
  addLayerField(path, *layer, "flipped", OFTInteger, OFSTBoolean);
  addLayerField(path, *layer, "split", OFTReal);
  addLayerField(path, *layer, "strahler", OFTInteger);
  addLayerField(path, *layer, "basin", OFTInteger);

  const auto order = graph.topologicalOrder();
  const auto strahler = order ? network::strahlerOrder(graph, *order) : std::vector<std::uint16_t>{};
  const auto basins = graph.components();
  for (ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const auto& r = graph.record(v);
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", r.id.c_str());
    if (r.fid >= 0) f.SetField("fid", static_cast<GIntBig>(r.fid));
    if (r.to_reach && !r.to_reach->empty()) f.SetField("to_reach", r.to_reach->c_str());
    f.SetField("flipped", (graph.flipped(v) || r.reoriented) ? 1 : 0);
    // The share the graph uses (a run-file override or a default rule may
    // differ from the field); null for a reach that is no branch.
    if (const double share = graph.share(v); !std::isnan(share)) f.SetField("split", share);
    if (!strahler.empty()) f.SetField("strahler", static_cast<int>(strahler[v]));
    f.SetField("basin", static_cast<int>(basins.basin[v]));
    auto line = flowLine(graph, v);
    if (!r.line.empty()) f.SetGeometry(&line);
    if (layer->CreateFeature(&f) != OGRERR_NONE) fail(path, "cannot write reach " + r.id);
  }
}


void writeAll(const std::string& path, const std::filesystem::path& tmp, const ReachGraph& graph,
              const network::ProblemList& problems) {
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  if (!driver) fail(path, "GDAL has no GeoPackage driver");
  std::unique_ptr<GDALDataset> ds(
      driver->Create(tmp.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!ds) fail(path, "cannot create the output file");
  const auto srs = spatialReferenceFromWkt(graph.table().crs_wkt);
  // One transaction: a GeoPackage commits row by row otherwise.
  if (ds->StartTransaction() != OGRERR_NONE) fail(path, "cannot start writing");
  addProblemsLayer(path, *ds, srs.get(), problems);
  writeNetworkLayer(path, *ds, srs.get(), graph);
  if (ds->CommitTransaction() != OGRERR_NONE) fail(path, "cannot finish writing");
  ds.reset();  // closes and flushes the file before it is renamed
}

}  // namespace

void writeProblemsGeoPackage(const std::string& path, const ReachGraph& graph,
                             const network::ProblemList& problems) {
  ensureGdal();
  CPLErrorReset();
  writeThenRename(path, ".gpkg",
                  [&](const std::filesystem::path& tmp) { writeAll(path, tmp, graph, problems); });
}

}  // namespace reachwise::io
