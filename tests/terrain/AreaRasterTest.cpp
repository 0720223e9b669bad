// Drainage area from a flow-accumulation or area raster written with GDAL
// into the test's scratch folder: the search radius, the units, cell areas
// on projected and geographic grids, CRS transformation, errors.

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/terrain/DrainageArea.hpp"
#include "support/Scratch.hpp"
#include "terrain/RasterFixtures.hpp"

namespace reachwise::terrain {
namespace {

using network::ReachGraph;
using network::ReachTable;
using network::testing::TableBuilder;
using testing::RasterSpec;
using testing::wktOf;
using testing::writeRaster;

/// One reach in UTM zone 31N (EPSG:32631) ending at (x, y).
ReachTable oneReach(double x, double y, int epsg = 32631) {
  ReachTable t = TableBuilder().reach("R", std::nullopt, {x, y - 400}, {x, y}).build();
  t.crs_wkt = wktOf(epsg);
  return t;
}

/// 20 × 20 cells of 10 m, top-left corner (500000, 1000), every cell 1
/// except the channel cell (10, 5) = 5000 and (12, 5) = 9000. A line end at
/// (500095, 945) lies in the centre of cell (9, 5): the channel cell's
/// centre is 10 m east of it, the other 30 m.
RasterSpec projectedGrid(int epsg = 32631) {
  RasterSpec s;
  s.gt = {500000, 10, 0, 1000, 0, -10};
  s.epsg = epsg;
  s.cells = {{10, 5, 5000}, {12, 5, 9000}};
  return s;
}

TEST(AreaRaster, DefaultRadiusOfTwoCellsFindsTheChannelCellBesideTheLineEnd) {
  const auto dir = testsupport::testScratchDir();
  AreaRaster r;
  r.path = writeRaster((dir / "acc.tif").string(), projectedGrid());
  const ReachTable t = oneReach(500095, 945);
  const ReachGraph g(t);
  // Radius 2 × 10 m = 20 m: the channel cell (10 m) is in, 9000 (30 m) out.
  // 5000 cells × 10 m × 10 m = 500 000 m² = 0.5 km².
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 0.5);
  // 5 m: only the cell holding the end (1 cell = 100 m² = 1e-4 km²).
  r.search_m = 5.0;
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 1e-4);
  // 0 m still looks in the cell holding the end.
  r.search_m = 0.0;
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 1e-4);
  // 35 m reaches the 9000 cell: 9000 × 100 m² = 0.9 km².
  r.search_m = 35.0;
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 0.9);
}

TEST(AreaRaster, UnitsOfTheCellValues) {
  const auto dir = testsupport::testScratchDir();
  RasterSpec s = projectedGrid();
  s.cells = {{10, 5, 2.5e6}};
  AreaRaster r;
  r.path = writeRaster((dir / "area.tif").string(), s);
  const ReachTable t = oneReach(500095, 945);
  const ReachGraph g(t);
  r.unit = RasterUnit::SquareMetres;
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 2.5);  // 2.5e6 m² = 2.5 km²
  r.unit = RasterUnit::SquareKilometres;
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 2.5e6);
}

TEST(AreaRaster, NodataCellsAreSkipped) {
  const auto dir = testsupport::testScratchDir();
  RasterSpec s = projectedGrid();
  s.cells = {{10, 5, -9999}};
  s.nodata = -9999;
  AreaRaster r;
  r.path = writeRaster((dir / "acc.tif").string(), s);
  const ReachTable t = oneReach(500095, 945);
  const ReachGraph g(t);
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 1e-4);  // the neighbours' 1 cell
}

TEST(AreaRaster, ALineEndOutsideTheRasterHasNoValueAndFallsBackToLength) {
  const auto dir = testsupport::testScratchDir();
  AreaRaster r;
  r.path = writeRaster((dir / "acc.tif").string(), projectedGrid());
  const ReachTable t = oneReach(600000, 945);
  const ReachGraph g(t);
  EXPECT_TRUE(std::isnan(sampleAreaRaster(g, r)[0]));
  AreaOptions o;
  o.raster = r;
  network::ProblemList problems;
  const auto a = drainageArea(g, o, problems);
  EXPECT_EQ(a[0].source, AreaSource::LengthRelation);  // 400 m line: Hack
  EXPECT_NEAR(a[0].km2, LengthRelation{}.areaKm2(400.0), 1e-12);
}

TEST(AreaRaster, ARasterWithoutCrsIsTakenInTheLinesCrs) {
  const auto dir = testsupport::testScratchDir();
  AreaRaster r;
  r.path = writeRaster((dir / "acc.tif").string(), projectedGrid(0));
  const ReachTable t = oneReach(500095, 945);
  const ReachGraph g(t);
  EXPECT_DOUBLE_EQ(sampleAreaRaster(g, r)[0], 0.5);
}

TEST(AreaRaster, GeographicRasterUnderProjectedLines) {
  // Grid in EPSG:4326, cells of 0.001°, top-left (2.990° E, 0.010° N).
  // The line end (500055, 500) in UTM 31N is (3.000495° E, 0.004524° N)
  // (central meridian 3° E): cell (10, 5), rows 5 spanning 0.005°-0.004° N.
  // Channel cell (11, 5), 1.005 cells = 112 m east; the radius is 2 × the
  // larger cell side at the point, 2 × 111.32 m = 222.6 m; cell (13, 5) is
  // 3.005 cells = 334 m away, out.
  const auto dir = testsupport::testScratchDir();
  RasterSpec s;
  s.gt = {2.990, 0.001, 0, 0.010, 0, -0.001};
  s.epsg = 4326;
  s.cells = {{11, 5, 1000}, {13, 5, 5000}};
  AreaRaster r;
  r.path = writeRaster((dir / "acc.tif").string(), s);
  const ReachTable t = oneReach(500055, 500);
  const ReachGraph g(t);
  // Cell area on the WGS 84 ellipsoid near the equator: Δλ Δφ b² cosφ /
  // (1 − e² sin²φ)² with Δ = 0.001° = 1.745329e-5 rad, Δλ Δφ =
  // 3.046174e-10, b² = a² (1 − e²) = 4.040830e13 m²; cosφ = 1 − 3e-9 and
  // e² sin²φ = 4e-11 at 0.0045°: 12 309.072 m². 1000 cells: 12.309072 km².
  // Tolerance 1e-7 relative: the cosφ term (3e-9) and the hand rounding.
  EXPECT_NEAR(sampleAreaRaster(g, r)[0], 12.309072, 12.309072 * 1e-7);
}

TEST(AreaRaster, CellAreaOnTheEllipsoidAt60Degrees) {
  // 0.01° × 0.01° between 60.00° and 60.01° N on WGS 84 (a = 6378137 m,
  // 1/f = 298.257223563, e² = 0.00669438): Δλ Δφ = (1.745329e-4)² =
  // 3.046174e-8; b² = 4.040830e13 m²; at the centre 60.005°: cosφ =
  // 0.4999244, sin²φ = 0.7500756, (1 − e² sin²φ)² = 0.9899826; area =
  // 3.046174e-8 × 4.040830e13 × 0.4999244 / 0.9899826 = 621 587.24 m².
  // The midpoint rule is good to ~1e-8 on so small a cell: tolerance 1e-7.
  const double gt[6] = {0, 0.01, 0, 60.01, 0, -0.01};
  EXPECT_NEAR(cellAreaKm2(gt, 0, 0, true, 1.0, 6378137.0, 298.257223563), 0.62158724,
              0.62158724 * 1e-7);
  // Projected: |10 × −10| m² × (0.3048 m/ft)² for a grid in feet.
  const double ft[6] = {0, 10, 0, 0, 0, -10};
  EXPECT_NEAR(cellAreaKm2(ft, 0, 0, false, 0.3048, 0, 0), 100 * 0.3048 * 0.3048 / 1e6, 1e-18);
}

TEST(AreaRaster, ErrorsNameTheRaster) {
  const auto dir = testsupport::testScratchDir();
  const ReachTable t = oneReach(500095, 945);
  const ReachGraph g(t);
  AreaRaster r;
  r.path = (dir / "missing.tif").string();
  try {
    sampleAreaRaster(g, r);
    FAIL() << "a missing raster must be refused";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, r.path);
    EXPECT_EQ(e.where().field, "prepare.area_raster");
  }
  // A text file is not a raster.
  r.path = (dir / "notes.tif").string();
  { std::FILE* f = std::fopen(r.path.c_str(), "w"); std::fputs("not a raster\n", f); std::fclose(f); }
  EXPECT_THROW(sampleAreaRaster(g, r), InputError);
  // A search radius that would read more than 1e7 cells is refused before
  // reading: a sparse 4000 × 4000 grid (1.6e7 cells, nothing written) and
  // a radius of 1000 km.
  {
    const std::string path = (dir / "big.tif").string();
    char** options = CSLSetNameValue(nullptr, "SPARSE_OK", "TRUE");
    GDALDataset* big = GetGDALDriverManager()->GetDriverByName("GTiff")->Create(
        path.c_str(), 4000, 4000, 1, GDT_Float64, options);
    CSLDestroy(options);
    double gt[6] = {500000, 10, 0, 1000, 0, -10};
    big->SetGeoTransform(gt);
    GDALClose(big);
    r.path = path;
    r.search_m = 1e6;
    try {
      sampleAreaRaster(g, r);
      ADD_FAILURE() << "a radius covering 1.6e7 cells must be refused";
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find("covers more than"), std::string::npos) << e.what();
    }
    r.search_m.reset();
  }
  // A rotated grid.
  RasterSpec s = projectedGrid();
  s.gt = {500000, 10, 1, 1000, 1, -10};
  r.path = writeRaster((dir / "rotated.tif").string(), s);
  EXPECT_THROW(sampleAreaRaster(g, r), InputError);
}

}  // namespace
}  // namespace reachwise::terrain
