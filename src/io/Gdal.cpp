#include "reachwise/io/Gdal.hpp"

#include "GdalSupport.hpp"

#include <cpl_error.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_spatialref.h>

#include <gdal_priv.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <mutex>

namespace reachwise::io {

namespace {
void CPL_STDCALL quietHandler(CPLErr, CPLErrorNum, const char*) {
  // Messages stay available through CPLGetLastErrorMsg(); readers put them
  // into typed errors with the file and feature they concern.
}
}  // namespace

void ensureGdal() {
  static std::once_flag once;
  std::call_once(once, [] {
    GDALAllRegister();
    CPLSetErrorHandler(quietHandler);
  });
}

std::string gdalVersion() { return GDALVersionInfo("RELEASE_NAME"); }

void recoverHotJournal(const std::string& source) {
  namespace fs = std::filesystem;
  std::error_code ec;
  const fs::path journal = source + "-journal";
  if (source.empty() || !fs::is_regular_file(source, ec) || !fs::is_regular_file(journal, ec) ||
      fs::file_size(journal, ec) == 0 || ec)
    return;
  const fs::path folder = fs::path(source).has_parent_path() ? fs::path(source).parent_path() : fs::path(".");
  InputLocation where;
  where.file = source;
  if (::access(source.c_str(), W_OK) != 0 || ::access(folder.c_str(), W_OK) != 0)
    throw InputError(where, fmt::format("an interrupted writer left its unfinished changes in {}; they must be "
                                        "rolled back before the file can be read, which needs write access to "
                                        "the file and its folder: make both writable (or run once as their "
                                        "owner) and try again; do not delete the journal",
                                        journal.string()));
  ensureGdal();
  CPLErrorReset();
  // Opening read-write and reading the catalogue makes SQLite roll the
  // journal back (sqlite.org, "Atomic Commit In SQLite" §4.2, hot
  // journals, from memory); a writer still at work keeps its journal.
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(source.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  if (ds) (void)ds->GetLayerCount();
  ds.reset();
  if (!fs::exists(journal, ec))
    fmt::print(stderr, "note: {}: rolled back the unfinished changes of an interrupted writer ({}); the "
                       "file is as it was before them\n", source, journal.string());
}

void throwWithGdalMessage(const InputLocation& where, const std::string& what) {
  const std::string gdal = CPLGetLastErrorMsg();
  throw InputError(where, gdal.empty() ? what : what + " (" + gdal + ")");
}

void addLayerField(const std::string& path, OGRLayer& layer, const char* name, OGRFieldType type,
                   OGRFieldSubType subtype) {
  OGRFieldDefn defn(name, type);
  defn.SetSubType(subtype);
  if (layer.CreateField(&defn) != OGRERR_NONE) throwWithGdalMessage(path, std::string("cannot add field ") + name);
}

OGRLayer* chooseLayer(GDALDataset& ds, const std::string& wanted, const InputLocation& where,
                      bool (*fits)(OGRwkbGeometryType), const std::string& kind, const std::string& config_key) {
  std::string all, matching;
  std::vector<OGRLayer*> found;
  for (OGRLayer* layer : ds.GetLayers()) {
    all += (all.empty() ? "" : ", ") + std::string(layer->GetName());
    if (fits(layer->GetGeomType())) {
      found.push_back(layer);
      matching += (matching.empty() ? "" : ", ") + std::string(layer->GetName());
    }
  }
  if (!wanted.empty()) {
    if (OGRLayer* layer = ds.GetLayerByName(wanted.c_str())) return layer;
    throw InputError(where, fmt::format("no layer named {}; layers: {}", wanted, all.empty() ? "(none)" : all));
  }
  if (found.size() == 1) return found.front();
  if (found.size() > 1)
    throw InputError(where, fmt::format("several {} layers ({}); choose one ({})", kind, matching, config_key));
  if (ds.GetLayerCount() == 1 && wkbFlatten(ds.GetLayer(0)->GetGeomType()) == wkbUnknown) return ds.GetLayer(0);
  throw InputError(where, fmt::format("no {} layer; layers: {}", kind, all.empty() ? "(none)" : all));
}

LayerMetric layerMetric(const OGRSpatialReference* srs, std::optional<double> length_unit_m,
                        const InputLocation& where, const std::string& what) {
  LayerMetric m;
  if (!srs) {
    if (!length_unit_m)
      throw InputError(where, what + " has no coordinate reference system; set network.length_unit");
    m.metres_per_unit = *length_unit_m;
  } else if (!srs->IsGeographic()) {
    m.metres_per_unit = srs->GetLinearUnits(nullptr);
  } else {
    m.geographic = true;
    m.metres_per_unit = 111320.0;
    OGRErr err = OGRERR_NONE;
    m.semi_major_m = srs->GetSemiMajor(&err);
    const double inv_f = srs->GetInvFlattening(&err);
    m.flattening = inv_f > 0 ? 1.0 / inv_f : 0.0;
    m.degrees_per_unit = srs->GetAngularUnits(nullptr) * 180.0 / M_PI;
    const auto& mapping = srs->GetDataAxisToSRSAxisMapping();
    OGRAxisOrientation orient = OAO_East;
    srs->GetAxis(nullptr, (mapping.empty() ? 1 : std::abs(mapping.front())) - 1, &orient);
    m.lat_first = orient == OAO_North || orient == OAO_South;
  }
  return m;
}

std::optional<std::string> trimmedText(OGRFeature& f, const char* name) {
  const int i = f.GetFieldIndex(name);
  if (i < 0 || !f.IsFieldSetAndNotNull(i)) return std::nullopt;
  const std::string v = f.GetFieldAsString(i);
  const auto b = v.find_first_not_of(" \t"), e = v.find_last_not_of(" \t");
  return b == std::string::npos ? std::string() : v.substr(b, e - b + 1);
}

const OGRSpatialReference* layerCrsMatching(OGRLayer& layer, const std::string& network_crs_wkt,
                                            const InputLocation& where, const std::string& what) {
  const OGRSpatialReference* srs = layer.GetSpatialRef();
  const std::string name = srs && srs->GetName() ? srs->GetName() : "";
  if (name.rfind("Undefined ", 0) == 0) return nullptr;
  if (srs && !network_crs_wkt.empty()) {
    OGRSpatialReference net;
    net.importFromWkt(network_crs_wkt.c_str());
    const char* const same[] = {"IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES", "CRITERION=EQUIVALENT", nullptr};
    if (!srs->IsSame(&net, same))
      throw InputError(where, fmt::format("{}' CRS ({}) is not the network's ({}); reproject {}", what, name,
                                          net.GetName() ? net.GetName() : "?", what));
  }
  return srs;
}

std::unique_ptr<OGRSpatialReference> spatialReferenceFromWkt(const std::string& crs_wkt) {
  if (crs_wkt.empty()) return nullptr;
  auto srs = std::make_unique<OGRSpatialReference>();
  if (srs->importFromWkt(crs_wkt.c_str()) != OGRERR_NONE) return nullptr;
  srs->SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  return srs;
}

}  // namespace reachwise::io
