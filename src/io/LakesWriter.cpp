#include "reachwise/io/LakesWriter.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <memory>

#include "GdalSupport.hpp"
#include "ResultsTables.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/routing/Peak.hpp"

namespace reachwise::io {

void writeLakesLayer(const std::string& gpkg, const std::string& crs_wkt, const routing::TimeAxis& axis,
                     const std::vector<LakeOutput>& lakes) {
  ensureGdal();
  CPLErrorReset();
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  if (!ds) throwWithGdalMessage(gpkg, "cannot open the results to add the lakes");
  const auto srs = spatialReferenceFromWkt(crs_wkt);
  OGRLayer* layer = ds->CreateLayer("lakes", srs.get(), wkbMultiPolygon, nullptr);
  if (!layer) throwWithGdalMessage(gpkg, "cannot add the lakes layer", "lakes");
  struct Column {
    const char* name;
    OGRFieldType type;
  };
  const Column columns[] = {{"lake_id", OFTString},         {"reach_id", OFTString},
                            {"inflow_peak_m3s", OFTReal},   {"inflow_peak_time", OFTDateTime},
                            {"outflow_peak_m3s", OFTReal},  {"outflow_peak_time", OFTDateTime},
                            {"attenuation_pct", OFTReal},   {"lag_h", OFTReal},
                            {"peak_level_m", OFTReal},      {"peak_storage_m3", OFTReal},
                            {"volume_in_m3", OFTReal},      {"volume_out_m3", OFTReal},
                            {"storage_change_m3", OFTReal}, {"volume_error_m3", OFTReal},
                            {"substeps", OFTInteger}};
  for (const auto& c : columns) {
    OGRFieldDefn defn(c.name, c.type);
    if (layer->CreateField(&defn) != OGRERR_NONE)
      throwWithGdalMessage(gpkg, std::string("cannot add field ") + c.name, "lakes");
  }
  const auto setTime = [](OGRFeature& f, const char* name, double unix_s) {
    const auto w = results::wallClock(unix_s, 0);
    f.SetField(name, w.year, w.month, w.day, w.hour, w.minute, w.second, w.tz_flag);
  };
  ds->StartTransaction();
  for (const auto& out : lakes) {
    const auto& r = out.routing->result;
    const routing::Peak in = routing::findPeak(out.routing->inflow_m3s);
    const routing::Peak o = routing::findPeak(r.outflow_m3s);
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("lake_id", out.lake->lake_id.c_str());
    if (!out.outflow_reach.empty()) f.SetField("reach_id", out.outflow_reach.c_str());  // null: a terminal lake
    f.SetField("inflow_peak_m3s", in.value);
    setTime(f, "inflow_peak_time", axis.at(in.index));
    f.SetField("outflow_peak_m3s", o.value);
    setTime(f, "outflow_peak_time", axis.at(o.index));
    if (in.value > 0) f.SetField("attenuation_pct", 100.0 * (1.0 - o.value / in.value));
    f.SetField("lag_h", (o.index - in.index) * axis.dt_s / 3600.0);
    double level = r.level_m.front(), storage = r.storage_m3.front();
    for (std::size_t n = 0; n < r.level_m.size(); ++n) {
      level = std::max(level, r.level_m[n]);
      storage = std::max(storage, r.storage_m3[n]);
    }
    f.SetField("peak_level_m", level);
    f.SetField("peak_storage_m3", storage);
    f.SetField("volume_in_m3", r.volume_in_m3);
    f.SetField("volume_out_m3", r.volume_out_m3);
    f.SetField("storage_change_m3", r.storage_change_m3);
    f.SetField("volume_error_m3", r.volume_error_m3);
    f.SetField("substeps", static_cast<int>(r.substeps));
    OGRGeometry* g = nullptr;
    if (!out.lake->wkt.empty() && OGRGeometryFactory::createFromWkt(out.lake->wkt.c_str(), nullptr, &g) == OGRERR_NONE) {
      std::unique_ptr<OGRGeometry> owned(OGRGeometryFactory::forceToMultiPolygon(g));
      f.SetGeometry(owned.get());
    }
    if (layer->CreateFeature(&f) != OGRERR_NONE) throwWithGdalMessage(gpkg, "cannot write lake " + out.lake->lake_id, "lakes");
  }
  if (ds->CommitTransaction() != OGRERR_NONE) throwWithGdalMessage(gpkg, "cannot write the lakes", "lakes");
}

}  // namespace reachwise::io
