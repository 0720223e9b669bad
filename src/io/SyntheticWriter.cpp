#include "reachwise/io/SyntheticWriter.hpp"

#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cstdio>
#include <memory>
#include <system_error>

#include "GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"

namespace reachwise::io {
namespace fs = std::filesystem;

namespace {

[[noreturn]] void failAt(const fs::path& file, const std::string& what, const std::string& layer = {}) {
  InputLocation at;
  at.file = file.string();
  at.layer = layer;
  throwWithGdalMessage(at, what);
}

/// Removes a temporary file unless released (the output is complete).
class TemporaryFile {
public:
  explicit TemporaryFile(fs::path path) : path_(std::move(path)) {
    std::error_code ec;
    fs::remove(path_, ec);
  }
  ~TemporaryFile() {
    if (path_.empty()) return;
    std::error_code ec;
    fs::remove(path_, ec);
  }
  TemporaryFile(const TemporaryFile&) = delete;
  TemporaryFile& operator=(const TemporaryFile&) = delete;
  const fs::path& path() const { return path_; }
  /// Hands the file to `into` (or renames it onto `target` alone) and
  /// stops owning it.
  void commit(const fs::path& target, OutputCommit* into, bool overwrite) {
    const fs::path done = path_;
    path_.clear();
    if (into) {
      into->add(done, target);
      return;
    }
    OutputCommit own(overwrite);
    own.add(done, target);
    own.commit();
  }

private:
  fs::path path_;
};

/// Text id "R<k>" into a caller buffer (no allocation per feature).
const char* idText(char (&buffer)[24], std::size_t reach) {
  const auto end = fmt::format_to_n(buffer, sizeof buffer - 1, "R{}", reach);
  *end.out = '\0';
  return buffer;
}

void addField(const fs::path& file, OGRLayer& layer, const char* name, OGRFieldType type) {
  OGRFieldDefn field(name, type);
  if (layer.CreateField(&field) != OGRERR_NONE)
    failAt(file, fmt::format("cannot create field {}", name), layer.GetName());
}

void writeFeatures(const fs::path& target, OGRLayer& layer, const network::SyntheticNetwork& net) {
  for (const char* name : {"reach_id", "to_reach"}) addField(target, layer, name, OFTString);
  for (const char* name : {"slope", "manning_n", "bottom_width", "side_slope", "length"})
    addField(target, layer, name, OFTReal);
  OGRFeature feature(layer.GetLayerDefn());
  // The feature owns one line whose points are rewritten for every reach.
  auto* line = new OGRLineString;
  feature.SetGeometryDirectly(line);
  char id[24], to[24];
  for (std::size_t i = 0; i < net.size(); ++i) {
    const auto points = net.line(i);
    line->setNumPoints(static_cast<int>(points.size()), FALSE);
    for (std::size_t k = 0; k < points.size(); ++k)
      line->setPoint(static_cast<int>(k), points[k].x, points[k].y);
    feature.SetFID(OGRNullFID);
    feature.SetField(0, idText(id, i));
    if (net.downstream[i] == network::kSyntheticOutlet) feature.SetFieldNull(1);
    else feature.SetField(1, idText(to, net.downstream[i]));
    feature.SetField(2, net.slope[i]);
    feature.SetField(3, net.manning_n[i]);
    feature.SetField(4, net.bottom_width_m[i]);
    feature.SetField(5, net.side_slope[i]);
    feature.SetField(6, net.length_m[i]);
    if (layer.CreateFeature(&feature) != OGRERR_NONE)
      failAt(target, fmt::format("cannot write reach {}", id), layer.GetName());
  }
}

void writeLakeFeatures(const fs::path& target, OGRLayer& layer, const std::vector<network::SyntheticLake>& lakes) {
  addField(target, layer, "lake_id", OFTString);
  for (const char* name : {"crest_level_m", "weir_length_m"}) addField(target, layer, name, OFTReal);
  OGRFeature feature(layer.GetLayerDefn());
  for (std::size_t k = 0; k < lakes.size(); ++k) {
    auto* ring = new OGRLinearRing;
    for (const auto& p : lakes[k].ring) ring->addPoint(p.x, p.y);
    ring->closeRings();
    auto* polygon = new OGRPolygon;
    polygon->addRingDirectly(ring);
    feature.SetGeometryDirectly(polygon);
    feature.SetFID(OGRNullFID);
    const std::string id = network::SyntheticLake::id(k);
    feature.SetField(0, id.c_str());
    feature.SetField(1, lakes[k].crest_level_m);
    feature.SetField(2, lakes[k].weir_length_m);
    if (layer.CreateFeature(&feature) != OGRERR_NONE)
      failAt(target, fmt::format("cannot write lake {}", id), layer.GetName());
  }
}

}  // namespace

void writeSyntheticGpkg(const fs::path& path, const network::SyntheticNetwork& net,
                        const SyntheticGpkgOptions& options, const std::vector<network::SyntheticLake>& lakes,
                        OutputCommit* into) {
  refuseExisting(path, options.overwrite);
  requireParentFolder(path);
  ensureGdal();
  CPLErrorReset();
  TemporaryFile tmp(partialPath(path, ".gpkg"));
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  if (!driver) failAt(path, "GDAL has no GeoPackage driver");
  {
    std::unique_ptr<GDALDataset> ds(driver->Create(tmp.path().c_str(), 0, 0, 0, GDT_Unknown, nullptr));
    if (!ds) failAt(path, "cannot create the output file");
    OGRSpatialReference srs;
    if (srs.importFromEPSG(options.epsg) != OGRERR_NONE)
      failAt(path, fmt::format("unknown CRS EPSG:{}", options.epsg));
    srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    OGRLayer* layer = ds->CreateLayer(options.layer.c_str(), &srs, wkbLineString, nullptr);
    if (!layer) failAt(path, "cannot create layer " + options.layer, options.layer);
    OGRLayer* lake_layer = nullptr;
    if (!lakes.empty()) {
      lake_layer = ds->CreateLayer("lakes", &srs, wkbPolygon, nullptr);
      if (!lake_layer) failAt(path, "cannot create layer lakes", "lakes");
    }
    if (ds->StartTransaction() != OGRERR_NONE) failAt(path, "cannot start writing");
    writeFeatures(path, *layer, net);
    if (lake_layer) writeLakeFeatures(path, *lake_layer, lakes);
    if (ds->CommitTransaction() != OGRERR_NONE) failAt(path, "cannot finish writing");
    ds.reset();  // closes and flushes (builds the spatial index) before the rename
    if (CPLGetLastErrorType() >= CE_Failure) failAt(path, "cannot close the output file");
  }
  tmp.commit(path, into, options.overwrite);
}

void writeSyntheticLateralNetcdf(const fs::path& path, const network::SyntheticNetwork& net,
                                 const network::SyntheticStorm& storm, const routing::TimeAxis& axis,
                                 bool overwrite, const ForcingNetcdfOptions& options, OutputCommit* into) {
  refuseExisting(path, overwrite);
  std::vector<std::string> ids(net.size());
  for (std::size_t i = 0; i < net.size(); ++i) ids[i] = network::SyntheticNetwork::id(i);
  NetcdfForcingWriter writer(path, axis, std::move(ids), false, true, options);
  std::vector<double> series(axis.steps);
  for (std::size_t i = 0; i < net.size(); ++i) {
    network::syntheticLateral(net, i, storm, axis, series);
    writer.write(ForcingKind::Lateral, i, series);
  }
  writer.finish(into);
}

void writeSyntheticInflowCsv(const fs::path& path, const network::SyntheticNetwork& net,
                             const network::SyntheticStorm& storm, const routing::TimeAxis& axis,
                             bool overwrite, OutputCommit* into) {
  refuseExisting(path, overwrite);
  requireParentFolder(path);
  const auto inflows = network::syntheticInflow(net, storm, axis);
  TemporaryFile tmp(partialPath(path, ".csv"));
  {
    std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(tmp.path().c_str(), "w"), &std::fclose);
    InputLocation at;
    at.file = path.string();
    if (!file) throw InputError(at, "cannot create the file");
    fmt::print(file.get(), "reach_id,time,discharge\n");
    for (const auto& inflow : inflows) {
      const std::string id = network::SyntheticNetwork::id(inflow.reach);
      for (std::size_t k = 0; k < axis.steps; ++k) {
        const auto t = axis.start_unix_s + static_cast<std::int64_t>(static_cast<double>(k) * axis.dt_s);
        fmt::print(file.get(), "{},{},{}\n", id, formatIsoTime(t, axis.utc_offset_min),
                   inflow.discharge_m3s[k]);
      }
    }
    if (std::ferror(file.get()) || std::fclose(file.release()) != 0)
      throw InputError(at, "cannot write the file");
  }
  tmp.commit(path, into, overwrite);
}

}  // namespace reachwise::io
