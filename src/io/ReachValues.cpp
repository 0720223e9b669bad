#include "reachwise/io/ReachValues.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <cstdlib>
#include <limits>
#include <map>
#include <string_view>
#include <unordered_map>

#include "GdalSupport.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"

namespace reachwise::io {

namespace {

std::string trimmed(std::string_view s) {
  const auto b = s.find_first_not_of(" \t\r\n");
  if (b == std::string_view::npos) return {};
  const auto e = s.find_last_not_of(" \t\r\n");
  return std::string(s.substr(b, e - b + 1));
}

InputLocation at(const network::ReachTable& table, const std::string& field) {
  InputLocation where;
  where.file = table.source;
  where.layer = table.layer;
  where.field = field;
  return where;
}

/// Calls `take(fid, feature, index)` for every feature of the table's layer.
template <class Take>
void eachFeature(const network::ReachTable& table, const std::string& field, Take take) {
  ensureGdal();
  GDALDatasetUniquePtr ds(
      GDALDataset::Open(table.source.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) throwWithGdalMessage(at(table, field), "cannot be opened as a vector source");
  OGRLayer* layer = table.layer.empty() ? ds->GetLayer(0) : ds->GetLayerByName(table.layer.c_str());
  if (!layer) throw InputError(at(table, field), "no such layer");
  const int index = layer->GetLayerDefn()->GetFieldIndex(field.c_str());
  if (index < 0) throw InputError(at(table, field), "the layer has no such field");
  layer->ResetReading();
  for (auto& feature : *layer) take(feature->GetFID(), *feature, index);
}

}  // namespace

std::vector<double> readReachNumbers(const network::ReachTable& table, const std::string& field,
                                     bool downstream_piece_only) {
  std::unordered_map<std::int64_t, double> by_fid;
  eachFeature(table, field, [&](std::int64_t fid, const OGRFeature& f, int idx) {
    double d = std::numeric_limits<double>::quiet_NaN();
    if (f.IsFieldSetAndNotNull(idx)) {
      const OGRFieldType type = f.GetFieldDefnRef(idx)->GetType();
      bool ok = true;
      if (type == OFTInteger || type == OFTInteger64 || type == OFTReal) {
        d = f.GetFieldAsDouble(idx);
      } else if (type == OFTString) {
        const std::string s = trimmed(f.GetFieldAsString(idx));
        if (!s.empty()) {
          char* end = nullptr;
          d = std::strtod(s.c_str(), &end);
          ok = end && *end == '\0';
        }
      } else {
        ok = false;
      }
      if (!ok || (!std::isnan(d) && !std::isfinite(d))) {
        InputLocation where = at(table, field);
        where.fid = fid;
        throw InputError(where, std::string("\"") + f.GetFieldAsString(idx) +
                                    "\" is not a finite number");
      }
    }
    by_fid[fid] = d;
  });
  // The last piece of each cut line (the highest piece number).
  std::map<std::string, std::uint32_t> last_piece;
  for (const auto& r : table.reaches)
    if (!r.line_id.empty()) last_piece[r.line_id] = std::max(last_piece[r.line_id], r.piece);
  std::vector<double> out(table.reaches.size(), std::numeric_limits<double>::quiet_NaN());
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    const auto& r = table.reaches[i];
    if (downstream_piece_only && !r.line_id.empty() && r.piece != last_piece[r.line_id]) continue;
    if (const auto it = by_fid.find(r.fid); it != by_fid.end()) out[i] = it->second;
  }
  return out;
}

std::vector<std::optional<std::string>> readReachTexts(const network::ReachTable& table,
                                                       const std::string& field) {
  std::unordered_map<std::int64_t, std::optional<std::string>> by_fid;
  eachFeature(table, field, [&](std::int64_t fid, const OGRFeature& f, int idx) {
    std::optional<std::string> v;
    if (f.IsFieldSetAndNotNull(idx)) {
      const OGRFieldType type = f.GetFieldDefnRef(idx)->GetType();
      std::string s = type == OFTInteger || type == OFTInteger64
                          ? std::to_string(f.GetFieldAsInteger64(idx))
                          : trimmed(f.GetFieldAsString(idx));
      if (!s.empty()) v = std::move(s);
    }
    by_fid[fid] = std::move(v);
  });
  std::vector<std::optional<std::string>> out(table.reaches.size());
  for (std::size_t i = 0; i < table.reaches.size(); ++i)
    if (const auto it = by_fid.find(table.reaches[i].fid); it != by_fid.end()) out[i] = it->second;
  return out;
}

}  // namespace reachwise::io
