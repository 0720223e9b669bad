// A large DEM for `reachwise prepare`: writes a tiled GeoTIFF covering a
// network layer's extent, and times a plain GDAL read of it (the floor the
// DEM sampling is compared with). Not a Google Benchmark fixture: each step
// runs once, as its own process, so /usr/bin/time -v sees each one's peak
// RSS (bench/prepare_100k.sh).
//
//   dem_bench generate NETWORK.gpkg DEM.tif [N]   N x N Float32 cells (default 10000), tiled 256 x 256
//   dem_bench read DEM.tif                        read every block of band 1
//
// The surface is invented: a plane falling 2 m per km towards the layer's
// southern edge (where `reachwise synth` puts its outlets) with hills of
// 5 m, so that most synthetic reaches run downhill and some cross a hill.
#include <fmt/core.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <chrono>
#include <cmath>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

namespace {

using Clock = std::chrono::steady_clock;

double secondsSince(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

[[noreturn]] void die(const std::string& what) {
  fmt::print(stderr, "dem_bench: {}: {}\n", what, CPLGetLastErrorMsg());
  std::exit(1);
}

int generate(const std::string& network, const std::string& dem, int n) {
  const GDALDatasetUniquePtr net(GDALDataset::Open(network.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!net || net->GetLayerCount() == 0) die("cannot open " + network);
  OGRLayer* layer = net->GetLayer(0);
  OGREnvelope e;
  if (layer->GetExtent(&e, TRUE) != OGRERR_NONE) die("no extent");
  const double margin = 0.02 * std::max(e.MaxX - e.MinX, e.MaxY - e.MinY);
  const double x0 = e.MinX - margin, y1 = e.MaxY + margin;
  const double cell = (std::max(e.MaxX - e.MinX, e.MaxY - e.MinY) + 2 * margin) / n;
  GDALDriver* gtiff = GetGDALDriverManager()->GetDriverByName("GTiff");
  char** opts = nullptr;
  opts = CSLSetNameValue(opts, "TILED", "YES");
  opts = CSLSetNameValue(opts, "BLOCKXSIZE", "256");
  opts = CSLSetNameValue(opts, "BLOCKYSIZE", "256");
  opts = CSLSetNameValue(opts, "BIGTIFF", "IF_SAFER");
  std::unique_ptr<GDALDataset> ds(gtiff->Create(dem.c_str(), n, n, 1, GDT_Float32, opts));
  CSLDestroy(opts);
  if (!ds) die("cannot create " + dem);
  double gt[6] = {x0, cell, 0, y1, 0, -cell};
  ds->SetGeoTransform(gt);
  if (const OGRSpatialReference* srs = layer->GetSpatialRef()) ds->SetSpatialRef(srs);
  GDALRasterBand* band = ds->GetRasterBand(1);
  band->SetNoDataValue(-9999);
  const double y_south = e.MinY;
  std::vector<float> row(static_cast<std::size_t>(n));
  const auto t0 = Clock::now();
  for (int j = 0; j < n; ++j) {
    const double y = y1 - (j + 0.5) * cell;
    for (int i = 0; i < n; ++i) {
      const double x = x0 + (i + 0.5) * cell;
      row[static_cast<std::size_t>(i)] =
          static_cast<float>(100.0 + 0.002 * (y - y_south) + 5.0 * std::sin(x / 700.0) * std::sin(y / 900.0));
    }
    if (band->RasterIO(GF_Write, 0, j, n, 1, row.data(), n, 1, GDT_Float32, 0, 0) != CE_None) die("write");
  }
  ds.reset();
  fmt::print("wrote {} ({} x {} cells of {:.1f} m) in {:.1f} s\n", dem, n, n, cell, secondsSince(t0));
  return 0;
}

int read(const std::string& dem) {
  const GDALDatasetUniquePtr ds(GDALDataset::Open(dem.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY));
  if (!ds) die("cannot open " + dem);
  GDALRasterBand* band = ds->GetRasterBand(1);
  int bx = 0, by = 0;
  band->GetBlockSize(&bx, &by);
  const int nx = band->GetXSize(), ny = band->GetYSize();
  std::vector<float> block(static_cast<std::size_t>(bx) * by);
  double sum = 0;
  const auto t0 = Clock::now();
  for (int j = 0; j < ny; j += by)
    for (int i = 0; i < nx; i += bx) {
      const int w = std::min(bx, nx - i), h = std::min(by, ny - j);
      if (band->RasterIO(GF_Read, i, j, w, h, block.data(), w, h, GDT_Float32, 0, 0) != CE_None) die("read");
      for (int k = 0; k < w * h; ++k) sum += block[static_cast<std::size_t>(k)];
    }
  fmt::print("read {} x {} cells in {:.2f} s (mean {:.2f})\n", nx, ny, secondsSince(t0),
             sum / (static_cast<double>(nx) * ny));
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  GDALAllRegister();
  const std::string mode = argc > 1 ? argv[1] : "";
  if (mode == "generate" && argc >= 4) return generate(argv[2], argv[3], argc > 4 ? std::atoi(argv[4]) : 10000);
  if (mode == "read" && argc == 3) return read(argv[2]);
  fmt::print(stderr, "usage: dem_bench generate NETWORK.gpkg DEM.tif [N] | dem_bench read DEM.tif\n");
  return 2;
}
