// Bed slopes from a DEM: profiles sampled on analytic surfaces whose
// slopes are known exactly, in one CRS and across CRSs, the robust fit,
// the conditioning over the network, nodata, and the minimum slope.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <fstream>
#include <numbers>
#include <random>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/terrain/Dem.hpp"
#include "support/Scratch.hpp"
#include "terrain/DemFixtures.hpp"

namespace {

using namespace reachwise;
using demfixtures::Grid;
using demfixtures::reach;
using terrain::ReachSlope;

/// A tilted plane z = 100 - 0.002 x' - 0.001 y' (x', y' metres from the
/// grid's corner): the bed slope of a line with unit direction (ux, uy)
/// is 0.002 ux + 0.001 uy (the directional derivative of a plane).
constexpr double kX0 = 500000, kY0 = 5010000;
double plane(double x, double y) { return 100 - 0.002 * (x - kX0) - 0.001 * (y - (kY0 - 10000)); }

std::size_t count(const network::ProblemList& problems, network::ProblemCode code) {
  std::size_t n = 0;
  for (const auto& p : problems) n += p.code == code;
  return n;
}

struct Fixture {
  testsupport::TempDir dir;
  network::ReachTable table;
  std::vector<ReachSlope> slopes;
  network::ProblemList problems;

  /// Builds the graph of `table` and derives the slopes on the DEM at `dem`.
  void derive(const std::string& dem, const terrain::SlopeOptions& options = {}) {
    const network::ReachGraph graph(table);
    const terrain::Dem raster(dem);
    slopes = terrain::bedSlopes(graph, raster, options, problems);
  }
};

/// A 10 km square, 30 m cells, UTM zone 33N.
Grid utmGrid() {
  Grid g;
  g.x0 = kX0;
  g.y0 = kY0;
  g.cell = 30;
  g.nx = g.ny = 334;
  return g;
}

}  // namespace

TEST(TheilSen, IgnoresOneWildSampleOfFive) {
  // Worked by hand from the definition (Sen 1968): the ten pairwise
  // gradients are six of -1 and four through the outlier (20/3, 10.5, 22,
  // -24); their median is -1, and the median of z + d is 10.
  std::vector<terrain::ProfileSample> s = {
      {0, 10, true}, {1, 9, true}, {2, 8, true}, {3, 30, true}, {4, 6, true}, {5, -100, false}};
  const auto fit = terrain::theilSen(s);
  EXPECT_EQ(fit.used, 5u);
  EXPECT_DOUBLE_EQ(fit.gradient, -1.0);
  EXPECT_DOUBLE_EQ(fit.intercept_m, 10.0);
}

TEST(TheilSen, NeedsTwoValidSamples) {
  EXPECT_EQ(terrain::theilSen({{0, 1, true}, {1, 2, false}}).used, 0u);
}

TEST(DemSlopes, TiltedPlaneGivesTheDirectionalSlope) {
  Fixture f;
  const std::string dem = (f.dir.path() / "plane.tif").string();
  demfixtures::writeDem(dem, utmGrid(), plane);
  f.table.crs_wkt = demfixtures::wkt(32633);
  // Along +x (slope 0.002), along +x+y at 45° (0.003/sqrt 2) with a bend
  // vertex on the way, and along +y (0.001).
  f.table.reaches.push_back(reach("east", {{kX0 + 1000, kY0 - 5000}, {kX0 + 4000, kY0 - 5000}}));
  f.table.reaches.push_back(
      reach("diag", {{kX0 + 2000, kY0 - 9000}, {kX0 + 3500, kY0 - 7500}, {kX0 + 5000, kY0 - 6000}}));
  f.table.reaches.push_back(reach("north", {{kX0 + 8000, kY0 - 9000}, {kX0 + 8000, kY0 - 2000}}));
  f.derive(dem);
  // Bilinear interpolation is exact on a plane, so the fitted slope differs
  // from the analytic one only by rounding; 1 % also covers the sample
  // spacing not dividing the line length evenly (the last interval is
  // shorter, the distances are scaled to the line length).
  const double expected[] = {0.002, 0.003 / std::numbers::sqrt2, 0.001};
  for (std::size_t v = 0; v < 3; ++v) {
    SCOPED_TRACE(f.table.reaches[v].id);
    EXPECT_NEAR(f.slopes[v].raw_slope, expected[v], 0.01 * expected[v]);
    EXPECT_NEAR(f.slopes[v].slope, expected[v], 0.01 * expected[v]);
    EXPECT_EQ(f.slopes[v].valid_samples, f.slopes[v].samples);
    // About one sample per 30 m cell.
    EXPECT_NEAR(static_cast<double>(f.slopes[v].samples), f.table.reaches[v].length_m / 30.0 + 1, 1.0);
    const auto& first = f.table.reaches[v].line.front();
    EXPECT_NEAR(f.slopes[v].up_elevation_m, plane(first.x, first.y), 1e-6);
  }
  EXPECT_TRUE(f.problems.empty());
}

TEST(DemSlopes, ConeGivesItsRadialSlope) {
  // z = 500 - 0.05 r around (cx, cy): along any radius the bed falls
  // 0.05 m per m. Bilinear interpolation is not exact on a cone (it is
  // curved across the radius); the error is at most h²/8 × 0.05/r
  // (h = 30 m, r >= 300 m: under 0.02 m) against a drop of over 100 m, so
  // 1 % is ample.
  Fixture f;
  const double cx = kX0 + 5000, cy = kY0 - 5000;
  const std::string dem = (f.dir.path() / "cone.tif").string();
  demfixtures::writeDem(dem, utmGrid(), [&](double x, double y) { return 500 - 0.05 * std::hypot(x - cx, y - cy); });
  f.table.crs_wkt = demfixtures::wkt(32633);
  const double a = 0.52;  // radians, not along the grid
  f.table.reaches.push_back(reach("radial", {{cx + 300 * std::cos(a), cy + 300 * std::sin(a)},
                                              {cx + 4000 * std::cos(a), cy + 4000 * std::sin(a)}}));
  f.derive(dem);
  EXPECT_NEAR(f.slopes[0].slope, 0.05, 0.0005);
  EXPECT_NEAR(f.slopes[0].up_elevation_m, 500 - 0.05 * 300, 0.1);
}

namespace {

/// The plane of TiltedPlane sampled on a DEM in EPSG `dem_epsg` covering
/// the same 10 km square, lines in UTM 33N: the slopes of two reaches.
std::vector<double> slopesWithDemIn(int dem_epsg, double cell) {
  Fixture f;
  // The square's corners in the DEM's CRS, padded by 2 km.
  OGRSpatialReference utm, other;
  utm.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  other.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  utm.importFromEPSG(32633);
  other.importFromEPSG(dem_epsg);
  std::unique_ptr<OGRCoordinateTransformation> t(OGRCreateCoordinateTransformation(&utm, &other));
  double xs[4] = {kX0 - 2000, kX0 + 12000, kX0 - 2000, kX0 + 12000};
  double ys[4] = {kY0 + 2000, kY0 + 2000, kY0 - 12000, kY0 - 12000};
  EXPECT_TRUE(t->Transform(4, xs, ys));
  Grid g;
  g.epsg = dem_epsg;
  g.cell = cell;
  g.x0 = *std::min_element(xs, xs + 4);
  g.y0 = *std::max_element(ys, ys + 4);
  g.nx = static_cast<int>((*std::max_element(xs, xs + 4) - g.x0) / cell) + 1;
  g.ny = static_cast<int>((g.y0 - *std::min_element(ys, ys + 4)) / cell) + 1;
  const std::string dem = (f.dir.path() / "dem.tif").string();
  demfixtures::writeDem(dem, g, plane, 32633);
  f.table.crs_wkt = demfixtures::wkt(32633);
  f.table.reaches.push_back(reach("east", {{kX0 + 1000, kY0 - 5000}, {kX0 + 4000, kY0 - 5000}}));
  f.table.reaches.push_back(
      reach("diag", {{kX0 + 2000, kY0 - 9000}, {kX0 + 3500, kY0 - 7500}, {kX0 + 5000, kY0 - 6000}}));
  f.derive(dem);
  EXPECT_EQ(f.slopes[0].valid_samples, f.slopes[0].samples);
  return {f.slopes[0].slope, f.slopes[1].slope};
}

}  // namespace

TEST(DemSlopes, DemInGeographicCrsGivesTheSameSlopes) {
  // The plane is linear in UTM coordinates; over cells of 0.0003° (about
  // 33 m by 24 m here) the UTM projection is affine to better than 1e-6 of
  // a cell, so bilinear sampling stays exact to rounding and the slopes
  // must match the analytic ones within the 1 % of TiltedPlane.
  const auto s = slopesWithDemIn(4326, 0.0003);
  EXPECT_NEAR(s[0], 0.002, 0.01 * 0.002);
  EXPECT_NEAR(s[1], 0.003 / std::numbers::sqrt2, 0.01 * 0.003 / std::numbers::sqrt2);
}

TEST(DemSlopes, DemInTheNeighbouringUtmZoneGivesTheSameSlopes) {
  // UTM 32N around 15° E (3° outside its zone): the grid is rotated and
  // scaled against the lines' but still locally affine; same 1 %.
  const auto s = slopesWithDemIn(32632, 30);
  EXPECT_NEAR(s[0], 0.002, 0.01 * 0.002);
  EXPECT_NEAR(s[1], 0.003 / std::numbers::sqrt2, 0.01 * 0.003 / std::numbers::sqrt2);
}

TEST(DemSlopes, NoiseSpikeAndPitLeaveSlopesPositiveAndProfilesNonIncreasing) {
  // A valley falling 0.002 to the east with uniform noise of ±0.05 m
  // (seeded), a bridge deck 8 m high across the main stem and a pit 5 m
  // deep on the tributary. Theil–Sen ignores the few deck and pit samples
  // (under 29 % of a reach); 10 % on the raw slope is about ten standard
  // errors of the fit for this noise (σ ≈ 0.03 m, 100 samples over 1 km:
  // about 1e-5 on the slope).
  Fixture f;
  std::mt19937 rng(42);
  std::uniform_real_distribution<double> noise(-0.05, 0.05);
  const std::string dem = (f.dir.path() / "valley.tif").string();
  Grid g = utmGrid();
  g.cell = 10;
  g.nx = g.ny = 1000;
  demfixtures::writeDem(dem, g, [&](double x, double y) {
    double z = 100 - 0.002 * (x - kX0) + noise(rng);
    if (x > kX0 + 2990 && x < kX0 + 3030) z += 8;                                  // bridge deck
    if (std::hypot(x - (kX0 + 1500), y - (kY0 - 4000)) < 25) z -= 5;  // pit on the tributary
    return z;
  });
  f.table.crs_wkt = demfixtures::wkt(32633);
  const double y = kY0 - 5000;
  f.table.reaches.push_back(reach("A", {{kX0 + 1000, y}, {kX0 + 2000, y}}, "B"));
  f.table.reaches.push_back(reach("B", {{kX0 + 2000, y}, {kX0 + 3500, y}}, "C"));
  f.table.reaches.push_back(reach("C", {{kX0 + 3500, y}, {kX0 + 5000, y}}));
  // The tributary runs south-east into the junction of A and B.
  f.table.reaches.push_back(reach("T", {{kX0 + 1000, kY0 - 3000}, {kX0 + 2000, y}}, "B"));
  f.derive(dem);
  const network::ReachGraph graph(f.table);
  for (network::ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    SCOPED_TRACE(graph.id(v));
    const auto& s = f.slopes[v];
    EXPECT_GT(s.slope, 0);
    EXPECT_GE(s.up_elevation_m, s.down_elevation_m);
    for (const auto w : graph.downstream(v)) EXPECT_GE(s.down_elevation_m, f.slopes[w].up_elevation_m);
  }
  EXPECT_NEAR(f.slopes[1].raw_slope, 0.002, 0.0002);  // B, across the deck
  // T falls 0.002 × its eastward run over its length.
  const double t_slope = 0.002 * 1000 / std::hypot(1000.0, 2000.0);
  EXPECT_NEAR(f.slopes[3].raw_slope, t_slope, 0.1 * t_slope);
  EXPECT_EQ(count(f.problems, network::ProblemCode::DemProfileRise), 0u);
}

TEST(DemSlopes, NodataReachesAreInterpolatedOrUseTheirValidPart) {
  // A chain A -> B -> C on the plane along +x (slope 0.002). B lies wholly
  // in a nodata patch, C three quarters and A's last 100 m: B takes its
  // elevations from A's bottom and C's top (a plane, so the fits extrapolate
  // and linear interpolation is exact), C fits its valid quarter.
  Fixture f;
  const std::string dem = (f.dir.path() / "holes.tif").string();
  const double y = kY0 - 5000;
  demfixtures::writeDem(dem, utmGrid(), [&](double x, double yy) {
    if (x > kX0 + 1700 && x < kX0 + 3100) return std::nan("");
    if (x > kX0 + 3250 && x < kX0 + 3900) return std::nan("");
    return plane(x, yy);
  });
  f.table.crs_wkt = demfixtures::wkt(32633);
  f.table.reaches.push_back(reach("A", {{kX0 + 1000, y}, {kX0 + 1800, y}}, "B"));
  f.table.reaches.push_back(reach("B", {{kX0 + 1800, y}, {kX0 + 3000, y}}, "C"));
  f.table.reaches.push_back(reach("C", {{kX0 + 3000, y}, {kX0 + 4000, y}}));
  f.derive(dem);
  EXPECT_TRUE(f.slopes[1].flags & terrain::kInterpolated);
  EXPECT_EQ(f.slopes[1].valid_samples, 0u);
  EXPECT_NEAR(f.slopes[1].slope, 0.002, 0.01 * 0.002);
  EXPECT_NEAR(f.slopes[1].up_elevation_m, plane(kX0 + 1800, y), 0.01);
  EXPECT_TRUE(f.slopes[2].flags & terrain::kPartlyNodata);
  EXPECT_FALSE(f.slopes[2].flags & terrain::kInterpolated);
  EXPECT_LT(f.slopes[2].valid_samples * 2, f.slopes[2].samples);
  EXPECT_GT(f.slopes[2].valid_samples, 2u);
  EXPECT_NEAR(f.slopes[2].raw_slope, 0.002, 0.01 * 0.002);
  // One dem_nodata for B (none valid), one for C (under half valid).
  ASSERT_EQ(count(f.problems, network::ProblemCode::DemNodata), 2u);
  for (const auto& p : f.problems) {
    if (p.code != network::ProblemCode::DemNodata) continue;
    EXPECT_NE(p.message.find("valid fraction"), std::string::npos) << p.message;
    EXPECT_EQ(p.severity, network::Severity::Warning);
  }
}

TEST(DemSlopes, LineOutsideTheRasterHasNoSlope) {
  Fixture f;
  const std::string dem = (f.dir.path() / "plane.tif").string();
  demfixtures::writeDem(dem, utmGrid(), plane);
  f.table.crs_wkt = demfixtures::wkt(32633);
  f.table.reaches.push_back(reach("far", {{kX0 + 20000, kY0}, {kX0 + 21000, kY0}}));
  f.derive(dem);
  EXPECT_EQ(f.slopes[0].valid_samples, 0u);
  EXPECT_TRUE(std::isnan(f.slopes[0].slope));
  EXPECT_TRUE(f.slopes[0].flags & terrain::kNoElevation);
  EXPECT_EQ(count(f.problems, network::ProblemCode::DemNodata), 1u);
}

TEST(DemSlopes, FlatAndRisingReachesAreFlooredToTheMinimum) {
  // A flat DEM: every slope is raised to min_slope and the downstream end
  // lowered by min_slope × length; a line running uphill by 4 m (> 2 m) is
  // also reported.
  Fixture f;
  const std::string dem = (f.dir.path() / "flat.tif").string();
  demfixtures::writeDem(dem, utmGrid(), [](double x, double) { return x < kX0 + 6000 ? 50.0 : 50.0 + 0.002 * (x - (kX0 + 6000)); });
  f.table.crs_wkt = demfixtures::wkt(32633);
  const double y = kY0 - 5000;
  f.table.reaches.push_back(reach("flat", {{kX0 + 1000, y}, {kX0 + 3000, y}}, "up"));
  f.table.reaches.push_back(reach("up", {{kX0 + 6000, y}, {kX0 + 8000, y}}));
  terrain::SlopeOptions options;
  options.min_slope = 2e-4;
  f.derive(dem, options);
  for (int v = 0; v < 2; ++v) {
    EXPECT_DOUBLE_EQ(f.slopes[v].slope, 2e-4);
    EXPECT_TRUE(f.slopes[v].flags & terrain::kFloored);
  }
  EXPECT_NEAR(f.slopes[0].down_elevation_m, 50 - 2e-4 * 2000, 1e-9);
  // "up" starts at the carved bottom of "flat", not at its fitted 50 m.
  EXPECT_NEAR(f.slopes[1].up_elevation_m, 50 - 2e-4 * 2000, 1e-9);
  EXPECT_NEAR(f.slopes[1].raw_slope, -0.002, 1e-5);
  EXPECT_TRUE(f.slopes[1].flags & terrain::kRising);
  EXPECT_EQ(count(f.problems, network::ProblemCode::SlopeFloored), 2u);
  EXPECT_EQ(count(f.problems, network::ProblemCode::DemProfileRise), 1u);
}

TEST(Conditioning, CarvesWorkedByHand) {
  // Fitted ends (top, bottom): A (10, 8) and D (12, 7.5) join into
  // B (9, 7), which drains to C (7.5, 7.6). By the rule each top takes the
  // lowest bottom upstream: B's top = min(9, 8, 7.5) = 7.5, its bottom 7;
  // C's top = 7, its bottom min(7.6, 7) = 7, a zero slope raised to 1e-4
  // over C's 1000 m: bottom 6.9.
  network::ReachTable table;
  table.reaches.push_back(reach("A", {{0, 0}, {1000, 0}}, "B"));
  table.reaches.push_back(reach("D", {{1000, 1000}, {1000, 0}}, "B"));
  table.reaches.push_back(reach("B", {{1000, 0}, {2000, 0}}, "C"));
  table.reaches.push_back(reach("C", {{2000, 0}, {3000, 0}}));
  const network::ReachGraph graph(table);
  std::vector<ReachSlope> fits(4);
  const double ends[4][2] = {{10, 8}, {12, 7.5}, {9, 7}, {7.5, 7.6}};
  for (int v = 0; v < 4; ++v) {
    fits[v].fit_up_m = ends[v][0];
    fits[v].fit_down_m = ends[v][1];
  }
  network::ProblemList problems;
  terrain::conditionElevations(graph, {}, fits, problems);
  EXPECT_DOUBLE_EQ(fits[2].up_elevation_m, 7.5);
  EXPECT_DOUBLE_EQ(fits[2].down_elevation_m, 7.0);
  EXPECT_DOUBLE_EQ(fits[2].slope, 0.5 / 1000);
  EXPECT_DOUBLE_EQ(fits[3].up_elevation_m, 7.0);
  EXPECT_NEAR(fits[3].down_elevation_m, 6.9, 1e-12);
  EXPECT_TRUE(fits[3].flags & terrain::kFloored);
  EXPECT_TRUE(fits[2].flags & terrain::kCarved);
  EXPECT_FALSE(fits[0].flags & terrain::kCarved);
}

TEST(Dem, UnreadableRasterNamesTheFile) {
  testsupport::TempDir dir;
  const std::string bad = (dir.path() / "not-a-dem.tif").string();
  std::ofstream(bad) << "this is text";
  try {
    terrain::Dem dem(bad);
    FAIL() << "opened";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, bad);
  }
}

TEST(DemSlopes, LargeSparseDemIsReadByWindows) {
  // A 10,000 × 10,000 DEM of 1 m cells (100 M cells, 800 MB as doubles if
  // read whole), stored sparse: only the 256 × 256 tiles along the
  // diagonal hold the plane, the others are absent and read as nodata. A
  // reach along the diagonal is sampled by windows of at most 4 Mi cells;
  // its slope is the plane's along the diagonal, 0.003/sqrt(2) (1 % as in
  // TiltedPlane), and every sample lies in a written tile.
  Fixture f;
  const std::string dem = (f.dir.path() / "large.tif").string();
  reachwise::io::ensureGdal();
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GTiff");
  CPLStringList opts;
  opts.SetNameValue("TILED", "YES");
  opts.SetNameValue("SPARSE_OK", "TRUE");
  opts.SetNameValue("COMPRESS", "DEFLATE");
  const int n = 10000, tile = 256;
  {
    GDALDatasetUniquePtr ds(drv->Create(dem.c_str(), n, n, 1, GDT_Float32, opts.List()));
    ASSERT_TRUE(ds);
    const double x0 = kX0, y0 = kY0;
    double gt[6] = {x0, 1, 0, y0, 0, -1};
    ds->SetGeoTransform(gt);
    OGRSpatialReference srs;
    srs.importFromEPSG(32633);
    ds->SetSpatialRef(&srs);
    ds->GetRasterBand(1)->SetNoDataValue(-9999);
    std::vector<float> block(static_cast<std::size_t>(tile) * tile);
    for (int t = 0; t * tile < n; ++t)
      for (int dt = -1; dt <= 1; ++dt) {
        const int bx = t + dt, by = t;
        if (bx < 0 || bx * tile >= n) continue;
        const int w = std::min(tile, n - bx * tile), h = std::min(tile, n - by * tile);
        for (int j = 0; j < h; ++j)
          for (int i = 0; i < w; ++i)
            block[static_cast<std::size_t>(j) * w + i] = static_cast<float>(
                50 + 0.002 * (bx * tile + i + 0.5) + 0.001 * (by * tile + j + 0.5));
        ASSERT_EQ(ds->GetRasterBand(1)->RasterIO(GF_Write, bx * tile, by * tile, w, h, block.data(), w, h,
                                                 GDT_Float32, 0, 0, nullptr),
                  CE_None);
      }
  }
  // z = 50 + 0.002 col + 0.001 row: falls towards the top-left corner, so
  // the reach runs from the bottom-right to the top-left.
  f.table.crs_wkt = demfixtures::wkt(32633);
  f.table.reaches.push_back(reach("diagonal", {{kX0 + 9900, kY0 - 9900}, {kX0 + 100, kY0 - 100}}));
  f.derive(dem);
  EXPECT_EQ(f.slopes[0].valid_samples, f.slopes[0].samples);
  EXPECT_GT(f.slopes[0].samples, 13000u);  // one per metre of 13,859 m
  // Float32 storage rounds elevations near 70 m to about 4e-6 m: negligible.
  const double expected = 0.003 / std::numbers::sqrt2;
  EXPECT_NEAR(f.slopes[0].slope, expected, 0.01 * expected);
}
