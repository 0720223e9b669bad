#include "reachwise/terrain/Dem.hpp"

#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <mutex>

#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"

namespace reachwise::terrain {

namespace {

/// Metres per degree of latitude (mean, common practice); used only to
/// turn a geographic raster's cell size into a sample spacing.
constexpr double kMetresPerDegree = 111320.0;

/// The largest window read at once (cells); a reach whose samples span
/// more is read in several windows. 4 Mi cells of 8 bytes = 32 MiB.
constexpr double kMaxWindowCells = 4.0 * 1024 * 1024;

/// A profile has at most this many samples (the spacing grows beyond).
constexpr double kMaxSamples = 1.0e6;

[[noreturn]] void fail(const std::string& path, const std::string& what) {
  InputLocation at;
  at.file = path;
  const std::string gdal = CPLGetLastErrorMsg();
  throw InputError(at, gdal.empty() ? what : what + " (" + gdal + ")");
}

struct Point {
  double px = 0, py = 0;  ///< fractional pixel/line coordinates
  bool inside = false;    ///< within the raster's extent
};

}  // namespace

struct Dem::Impl {
  GDALDatasetUniquePtr ds;
  GDALRasterBand* band = nullptr;
  int width = 0, height = 0;
  double inv[6] = {0, 0, 0, 0, 0, 0};  ///< georeferenced -> pixel/line
  bool has_nodata = false;
  double nodata = 0;
  std::string crs_wkt;  ///< empty: no CRS
  /// Transformations from a line CRS (by WKT) into the raster's CRS;
  /// null = same CRS.
  mutable std::mutex mutex;
  mutable std::map<std::string, std::unique_ptr<OGRCoordinateTransformation>> transforms;

  bool invalid(double v) const {
    if (std::isnan(v)) return true;
    if (!has_nodata) return false;
    return v == nodata || static_cast<float>(v) == static_cast<float>(nodata);
  }

  /// Transforms the points from the CRS `line_wkt` into the raster's, in
  /// place; `ok[k]` = 0 for a point that could not be transformed.
  /// OGRCoordinateTransformation is not thread-safe: one caller at a time.
  void transform(const std::string& line_wkt, const std::string& path, std::vector<double>& xs,
                 std::vector<double>& ys, std::vector<int>& ok) const {
    std::lock_guard lock(mutex);
    auto it = transforms.find(line_wkt);
    if (it == transforms.end()) it = transforms.emplace(line_wkt, create(line_wkt, path)).first;
    if (!it->second) return;
    std::vector<double> zs(xs.size(), 0.0);
    it->second->Transform(static_cast<int>(xs.size()), xs.data(), ys.data(), zs.data(), ok.data());
  }

  std::unique_ptr<OGRCoordinateTransformation> create(const std::string& line_wkt,
                                                      const std::string& path) const {
    std::unique_ptr<OGRCoordinateTransformation> t;
    if (!line_wkt.empty() && !crs_wkt.empty()) {
      OGRSpatialReference from, to;
      from.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
      to.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
      if (from.importFromWkt(line_wkt.c_str()) != OGRERR_NONE)
        fail(path, "cannot read the network layer's CRS");
      if (to.importFromWkt(crs_wkt.c_str()) != OGRERR_NONE) fail(path, "cannot read the raster's CRS");
      if (!from.IsSame(&to)) {
        CPLErrorReset();
        t.reset(OGRCreateCoordinateTransformation(&from, &to));
        if (!t) fail(path, "cannot transform the network layer's coordinates into the raster's CRS");
      }
    }
    return t;
  }
};

Dem::Dem(const std::string& path) : path_(path), impl_(std::make_unique<Impl>()) {
  io::ensureGdal();
  CPLErrorReset();
  impl_->ds.reset(GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY));
  if (!impl_->ds) fail(path, "cannot open the DEM as a raster");
  if (impl_->ds->GetRasterCount() < 1) fail(path, "the DEM has no raster band");
  impl_->band = impl_->ds->GetRasterBand(1);
  impl_->width = impl_->ds->GetRasterXSize();
  impl_->height = impl_->ds->GetRasterYSize();
  double gt[6];
  if (impl_->ds->GetGeoTransform(gt) != CE_None)
    fail(path, "the DEM has no georeferencing (geotransform)");
  if (!GDALInvGeoTransform(gt, impl_->inv)) fail(path, "the DEM's geotransform cannot be inverted");
  int has = 0;
  impl_->nodata = impl_->band->GetNoDataValue(&has);
  impl_->has_nodata = has != 0;
  if (const OGRSpatialReference* srs = impl_->ds->GetSpatialRef()) {
    char* wkt = nullptr;
    if (srs->exportToWkt(&wkt) == OGRERR_NONE && wkt) impl_->crs_wkt = wkt;
    CPLFree(wkt);
    const double dx = std::hypot(gt[1], gt[4]), dy = std::hypot(gt[2], gt[5]);
    cell_m_ = srs->IsGeographic() ? dy * kMetresPerDegree : std::min(dx, dy) * srs->GetLinearUnits();
  } else {
    cell_m_ = std::min(std::hypot(gt[1], gt[4]), std::hypot(gt[2], gt[5]));
  }
  if (!(cell_m_ > 0) || !std::isfinite(cell_m_)) fail(path, "the DEM's cell size is not positive");
}

Dem::~Dem() = default;

std::vector<ProfileSample> Dem::profile(const std::vector<network::Point3>& line, double length_m,
                                        const std::string& line_crs_wkt, double spacing_m) const {
  std::vector<ProfileSample> out;
  if (line.empty()) return out;
  // Planar distance along the line in its own units, scaled to length_m.
  std::vector<double> along(line.size(), 0.0);
  for (std::size_t i = 1; i < line.size(); ++i)
    along[i] = along[i - 1] + std::hypot(line[i].x - line[i - 1].x, line[i].y - line[i - 1].y);
  const double planar = along.back();
  const double metres = std::isfinite(length_m) && length_m > 0 ? length_m : planar;
  const double spacing = std::max(spacing_m > 0 ? spacing_m : cell_m_, metres / kMaxSamples);
  const std::size_t n =
      metres > 0 ? static_cast<std::size_t>(std::ceil(metres / spacing)) + 1 : std::size_t{2};
  std::vector<double> xs(n), ys(n);
  std::size_t seg = 1;
  for (std::size_t k = 0; k < n; ++k) {
    const double f = static_cast<double>(k) / static_cast<double>(n - 1);
    const double t = f * planar;
    while (seg + 1 < line.size() && along[seg] < t) ++seg;
    const std::size_t a = line.size() == 1 ? 0 : seg - 1, b = line.size() == 1 ? 0 : seg;
    const double len = along[b] - along[a];
    const double u = len > 0 ? std::clamp((t - along[a]) / len, 0.0, 1.0) : 0.0;
    xs[k] = line[a].x + u * (line[b].x - line[a].x);
    ys[k] = line[a].y + u * (line[b].y - line[a].y);
    out.push_back({f * metres, 0.0, false});
  }
  std::vector<int> ok(n, 1);
  // A transformation may fail for some points only: those are invalid.
  impl_->transform(line_crs_wkt, path_, xs, ys, ok);
  const auto& inv = impl_->inv;
  const int W = impl_->width, H = impl_->height;
  std::vector<Point> pts(n);
  for (std::size_t k = 0; k < n; ++k) {
    Point& p = pts[k];
    if (!ok[k] || !std::isfinite(xs[k]) || !std::isfinite(ys[k])) continue;
    p.px = inv[0] + inv[1] * xs[k] + inv[2] * ys[k];
    p.py = inv[3] + inv[4] * xs[k] + inv[5] * ys[k];
    p.inside = p.px >= 0 && p.px <= W && p.py >= 0 && p.py <= H;
  }
  // Bilinear interpolation between the four nearest cell centres (a cell's
  // value holds at its centre); within half a cell of the raster's edge the
  // edge cells are used.
  struct Corner {
    int i0, i1, j0, j1;
    double tx, ty;
  };
  auto corner = [&](const Point& p) {
    Corner c;
    const double fx = p.px - 0.5, fy = p.py - 0.5;
    c.i0 = std::clamp(static_cast<int>(std::floor(fx)), 0, W - 1);
    c.j0 = std::clamp(static_cast<int>(std::floor(fy)), 0, H - 1);
    c.i1 = std::min(c.i0 + 1, W - 1);
    c.j1 = std::min(c.j0 + 1, H - 1);
    c.tx = c.i1 == c.i0 ? 0.0 : std::clamp(fx - c.i0, 0.0, 1.0);
    c.ty = c.j1 == c.j0 ? 0.0 : std::clamp(fy - c.j0, 0.0, 1.0);
    return c;
  };
  std::vector<double> window;
  // Reads the window around samples [lo, hi), halving the range while the
  // window would be larger than kMaxWindowCells.
  auto readRange = [&](auto&& self, std::size_t lo, std::size_t hi) -> void {
    int x0 = W, x1 = -1, y0 = H, y1 = -1;
    for (std::size_t k = lo; k < hi; ++k) {
      if (!pts[k].inside) continue;
      const Corner c = corner(pts[k]);
      x0 = std::min(x0, c.i0);
      x1 = std::max(x1, c.i1);
      y0 = std::min(y0, c.j0);
      y1 = std::max(y1, c.j1);
    }
    if (x1 < x0) return;  // no sample inside the raster
    const int nx = x1 - x0 + 1, ny = y1 - y0 + 1;
    if (static_cast<double>(nx) * ny > kMaxWindowCells && hi - lo > 1) {
      const std::size_t mid = lo + (hi - lo) / 2;
      self(self, lo, mid);
      self(self, mid, hi);
      return;
    }
    window.assign(static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny), 0.0);
    CPLErrorReset();
    if (impl_->band->RasterIO(GF_Read, x0, y0, nx, ny, window.data(), nx, ny, GDT_Float64, 0, 0,
                              nullptr) != CE_None)
      fail(path_, fmt::format("cannot read the DEM window at column {}, row {}", x0, y0));
    auto at = [&](int i, int j) {
      return window[static_cast<std::size_t>(j - y0) * static_cast<std::size_t>(nx) +
                    static_cast<std::size_t>(i - x0)];
    };
    for (std::size_t k = lo; k < hi; ++k) {
      if (!pts[k].inside) continue;
      const Corner c = corner(pts[k]);
      const double w[4] = {(1 - c.tx) * (1 - c.ty), c.tx * (1 - c.ty), (1 - c.tx) * c.ty, c.tx * c.ty};
      const double v[4] = {at(c.i0, c.j0), at(c.i1, c.j0), at(c.i0, c.j1), at(c.i1, c.j1)};
      double z = 0;
      bool valid = true;
      for (int q = 0; q < 4; ++q) {
        if (w[q] == 0) continue;
        if (impl_->invalid(v[q])) {
          valid = false;
          break;
        }
        z += w[q] * v[q];
      }
      out[k].valid = valid;
      out[k].elevation_m = valid ? z : 0.0;
    }
  };
  readRange(readRange, 0, n);
  return out;
}

}  // namespace reachwise::terrain
