// `reachwise prepare` end to end: a small generated network and a DEM
// written by GDAL, the GeoPackage it writes (fields, provenance, lines as
// built), `route` on that output, and bad input.
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <string>

#include "io/NetworkFixtures.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"
#include "terrain/DemFixtures.hpp"

namespace {

namespace fs = std::filesystem;
using testsupport::runReachwise;

constexpr double kX0 = 500000, kY0 = 5010000;
/// The DEM: a plane falling 0.002 to the east (x in metres, UTM 33N), so a
/// line with eastward direction cosine ux has bed slope 0.002 ux.
double plane(double x, double) { return 100 - 0.002 * (x - kX0); }

struct Case {
  fs::path dir = testsupport::testScratchDir();
  std::string network = (dir / "net.gpkg").string();
  std::string dem = (dir / "dem.tif").string();
  std::string out = (dir / "prepared.gpkg").string();

  /// `slope_field` false: the layer has no slope field at all.
  explicit Case(bool slope_field = true) {
    for (const auto& p : {network, dem, out}) fs::remove(p);
    demfixtures::Grid g;
    g.x0 = kX0;
    g.y0 = kY0;
    g.cell = 20;
    g.nx = g.ny = 500;
    demfixtures::writeDem(dem, g, plane);
    // up and trib join into down; down is digitised against the flow;
    // trib has a slope of its own; no other reach has one.
    fixtures::Layer layer;
    layer.fields = {{"reach_id", OFTString},  {"to_reach", OFTString},     {"slope", OFTReal},
                    {"manning_n", OFTReal},   {"bottom_width", OFTReal},   {"side_slope", OFTReal},
                    {"name", OFTString}};
    const double y = kY0 - 5000;
    auto line = [](double xa, double ya, double xb, double yb) {
      return fmt::format("LINESTRING ({} {}, {} {})", xa, ya, xb, yb);
    };
    layer.features.push_back({line(kX0 + 1000, y, kX0 + 3000, y), {"up", "down", std::nullopt, "0.035", "5", "2", "Upper"}});
    layer.features.push_back({line(kX0 + 2000, y + 1500, kX0 + 3000, y), {"trib", "down", "0.005", "0.04", "3", "2", "Side"}});
    layer.features.push_back({line(kX0 + 6000, y, kX0 + 3000, y), {"down", std::nullopt, std::nullopt, "0.035", "8", "2", "Lower"}});
    if (!slope_field) {
      layer.fields.erase(layer.fields.begin() + 2);
      for (auto& f : layer.features) f.values.erase(f.values.begin() + 2);
    }
    fixtures::write(network, "GPKG", {layer});
  }
};

/// Routes the prepared layer of `c` into `results` with a small flood
/// entering at `up` and `trib`.
testsupport::CliRun routePrepared(const Case& c, const std::string& results) {
  const std::string inflow = (c.dir / "inflow.csv").string();
  {
    std::ofstream csv(inflow);
    csv << "reach_id,time,discharge\n";
    const double up[] = {1, 20, 8, 3, 1}, trib[] = {1, 5, 3, 1, 1};
    for (int k = 0; k < 5; ++k) csv << fmt::format("up,2026-05-01T{:02d}:00:00Z,{}\n", 3 * k, up[k]);
    for (int k = 0; k < 5; ++k) csv << fmt::format("trib,2026-05-01T{:02d}:00:00Z,{}\n", 3 * k, trib[k]);
  }
  fs::remove(results);
  return runReachwise(fmt::format("route {} --inflow {} --out {} --quiet", c.out, inflow, results));
}

/// reach_id -> feature of the `reaches` layer of `path` (a prepared
/// GeoPackage, which also has a `problems` layer, unless `prepared` is false).
std::map<std::string, std::unique_ptr<OGRFeature>> readReaches(const std::string& path, bool prepared = true) {
  GDALAllRegister();
  std::map<std::string, std::unique_ptr<OGRFeature>> out;
  const GDALDatasetUniquePtr ds(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  EXPECT_TRUE(ds) << path;
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("reaches");
  EXPECT_NE(layer, nullptr);
  if (prepared) {
    EXPECT_NE(ds->GetLayerByName("problems"), nullptr);
  }
  if (!layer) return out;
  layer->ResetReading();
  while (OGRFeature* raw = layer->GetNextFeature()) {
    std::unique_ptr<OGRFeature> f(raw);
    const std::string id = f->GetFieldAsString("reach_id");
    out.emplace(id, std::move(f));
  }
  return out;
}

}  // namespace

TEST(PrepareCommand, WritesSlopesFromTheDemAndRoutes) {
  Case c;
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("slope          2 from the DEM (0 floored to the minimum), 1 from the field"),
            std::string::npos)
      << r.out;
  auto reaches = readReaches(c.out);
  ASSERT_EQ(reaches.size(), 3u);
  // Bilinear sampling is exact on a plane: 1 % covers the sample spacing
  // (terrain/DemTest.cpp, TiltedPlane).
  for (const char* id : {"up", "down"}) {
    SCOPED_TRACE(id);
    const auto& f = *reaches.at(id);
    EXPECT_STREQ(f.GetFieldAsString("slope_source"), "dem");
    EXPECT_STREQ(f.GetFieldAsString("elevation_source"), "dem");
    EXPECT_NEAR(f.GetFieldAsDouble("slope"), 0.002, 0.01 * 0.002);
    EXPECT_GT(f.GetFieldAsDouble("up_elevation"), f.GetFieldAsDouble("down_elevation"));
    EXPECT_DOUBLE_EQ(f.GetFieldAsDouble("dem_valid_fraction"), 1.0);
  }
  const auto& trib = *reaches.at("trib");
  EXPECT_STREQ(trib.GetFieldAsString("slope_source"), "field");
  EXPECT_DOUBLE_EQ(trib.GetFieldAsDouble("slope"), 0.005);
  EXPECT_STREQ(trib.GetFieldAsString("name"), "Side");  // the input's own field, copied
  EXPECT_DOUBLE_EQ(trib.GetFieldAsDouble("manning_n"), 0.04);
  // down is written in flow order: it starts at the junction.
  const auto* down = reaches.at("down")->GetGeometryRef()->toLineString();
  EXPECT_DOUBLE_EQ(down->getX(0), kX0 + 3000);
  EXPECT_STREQ(reaches.at("up")->GetFieldAsString("to_reach"), "down");
  // The junction: down starts no higher than up ends (conditioned).
  EXPECT_LE(reaches.at("down")->GetFieldAsDouble("up_elevation"),
            reaches.at("up")->GetFieldAsDouble("down_elevation") + 1e-9);

  // The prepared layer routes as it is.
  const std::string results = (c.dir / "results.gpkg").string();
  const auto routed = routePrepared(c, results);
  EXPECT_EQ(routed.code, 0) << routed.out << routed.err;
  EXPECT_TRUE(fs::exists(results));
}

TEST(PrepareCommand, RunFileReplacesFieldSlopesAndSetsTheMinimum) {
  Case c;
  const std::string toml = (c.dir / "run.toml").string();
  std::ofstream(toml) << "[prepare]\nreplace = [\"slope\"]\nmin_slope = 0.003\n";
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --config {} --out {}", c.network, c.dem, toml, c.out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  auto reaches = readReaches(c.out);
  ASSERT_EQ(reaches.size(), 3u);
  for (const auto& [id, f] : reaches) {
    SCOPED_TRACE(id);
    EXPECT_STREQ(f->GetFieldAsString("slope_source"), "dem");
    // Every DEM slope here is below 0.003: all floored.
    EXPECT_DOUBLE_EQ(f->GetFieldAsDouble("slope"), 0.003);
    EXPECT_NE(std::string(f->GetFieldAsString("dem_flags")).find("floored"), std::string::npos);
  }
  // trib's raw slope is the plane's along its direction: 0.002 × 1000 / its length.
  EXPECT_NEAR(reaches.at("trib")->GetFieldAsDouble("dem_raw_slope"), 0.002 * 1000 / std::hypot(1000.0, 1500.0),
              0.01 * 0.002);
}

TEST(PrepareCommand, BadDemOrExistingOutputExitOneAndWriteNothing) {
  Case c;
  const std::string text = (c.dir / "not-a-raster.tif").string();
  std::ofstream(text) << "no raster here";
  auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, text, c.out));
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("not-a-raster.tif"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(c.out));
  r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, (c.dir / "absent.tif").string(), c.out));
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("absent.tif"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(c.out));
  // No partial file is left beside the output either.
  for (const auto& e : fs::directory_iterator(c.dir))
    EXPECT_EQ(e.path().filename().string().find(".partial"), std::string::npos) << e.path();

  std::ofstream(c.out) << "keep me";
  r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  EXPECT_EQ(r.code, 1);
  EXPECT_EQ(testsupport::slurp(c.out), "keep me");
  r = runReachwise(fmt::format("prepare {} --dem {} --out {} --overwrite", c.network, c.dem, c.out));
  EXPECT_EQ(r.code, 0) << r.err;
}

TEST(PrepareCommand, LayerWithoutSlopeFieldIsAcceptedWhenTheDemSuppliesIt) {
  Case c(false);
  // check needs a slope field (docs/formats.md, "Fields"); prepare does not.
  EXPECT_EQ(runReachwise("check " + c.network).code, 1);
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  auto reaches = readReaches(c.out);
  ASSERT_EQ(reaches.size(), 3u);
  for (const auto& [id, f] : reaches) EXPECT_STREQ(f->GetFieldAsString("slope_source"), "dem") << id;
  EXPECT_EQ(runReachwise("check " + c.out).code, 0);
}

TEST(PrepareCommand, TopologyFromGeometryIsWrittenAsBuilt) {
  // No to_reach field: the main line M (flowing east, digitised so) is cut
  // where the tributary T joins it mid-line (docs/formats.md, "Topology"):
  // pieces M.1 and M.2. The prepared layer holds the pieces with the
  // to_reach links built, and routes as it is. T runs north-south across
  // a plane falling east only: its DEM slope is 0, raised to the minimum.
  Case c;  // for the DEM and the paths
  fs::remove(c.network);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"manning_n", OFTReal}, {"bottom_width", OFTReal}};
  const double y = kY0 - 5000;
  layer.features.push_back({fmt::format("LINESTRING ({} {}, {} {})", kX0 + 1000, y, kX0 + 5000, y), {"M", "0.035", "6"}});
  layer.features.push_back(
      {fmt::format("LINESTRING ({} {}, {} {})", kX0 + 3000, y + 1500, kX0 + 3000, y), {"T", "0.04", "3"}});
  fixtures::write(c.network, "GPKG", {layer});
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  auto reaches = readReaches(c.out);
  ASSERT_EQ(reaches.size(), 3u);
  ASSERT_TRUE(reaches.count("M.1") && reaches.count("M.2") && reaches.count("T"));
  EXPECT_STREQ(reaches.at("M.1")->GetFieldAsString("to_reach"), "M.2");
  EXPECT_STREQ(reaches.at("T")->GetFieldAsString("to_reach"), "M.2");
  EXPECT_NEAR(reaches.at("M.1")->GetFieldAsDouble("slope"), 0.002, 0.01 * 0.002);
  EXPECT_DOUBLE_EQ(reaches.at("T")->GetFieldAsDouble("slope"), 1e-4);
  EXPECT_NE(std::string(reaches.at("T")->GetFieldAsString("dem_flags")).find("floored"), std::string::npos);
  // M.2 starts no higher than either reach flowing into it ends.
  for (const char* up : {"M.1", "T"})
    EXPECT_LE(reaches.at("M.2")->GetFieldAsDouble("up_elevation"),
              reaches.at(up)->GetFieldAsDouble("down_elevation") + 1e-9)
        << up;

  const std::string inflow = (c.dir / "inflow.csv").string();
  {
    std::ofstream csv(inflow);
    csv << "reach_id,time,discharge\n";
    const double q[] = {1, 10, 4, 2, 1};
    for (int k = 0; k < 5; ++k) csv << fmt::format("M.1,2026-05-01T{:02d}:00:00Z,{}\n", 3 * k, q[k]);
  }
  const std::string results = (c.dir / "results.gpkg").string();
  fs::remove(results);
  const auto routed = runReachwise(fmt::format("route {} --inflow {} --out {} --quiet", c.out, inflow, results));
  EXPECT_EQ(routed.code, 0) << routed.out << routed.err;
}

TEST(PrepareCommand, NetworkWithErrorsIsWrittenWithThemAndExitsOne) {
  // T's Manning's n is negative: an error prepare does not mend (a value
  // in the layer wins). prepare still writes the layer (to be fixed in a
  // GIS), with the error in its problems layer.
  Case c;
  fs::remove(c.network);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"manning_n", OFTReal}, {"bottom_width", OFTReal}};
  const double y = kY0 - 5000;
  layer.features.push_back({fmt::format("LINESTRING ({} {}, {} {})", kX0 + 1000, y, kX0 + 3000, y), {"M", "0.035", "6"}});
  layer.features.push_back(
      {fmt::format("LINESTRING ({} {}, {} {})", kX0 + 3000, y, kX0 + 5000, y), {"T", "-0.02", "3"}});
  fixtures::write(c.network, "GPKG", {layer});
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  EXPECT_EQ(r.code, 1) << r.out << r.err;
  EXPECT_NE(r.err.find("error invalid_attribute T "), std::string::npos) << r.err;
  ASSERT_TRUE(fs::exists(c.out));
  GDALAllRegister();
  const GDALDatasetUniquePtr ds(GDALDataset::Open(c.out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* problems = ds->GetLayerByName("problems");
  ASSERT_NE(problems, nullptr);
  problems->SetAttributeFilter("code = 'invalid_attribute' AND reach_id = 'T'");
  EXPECT_EQ(problems->GetFeatureCount(), 1);
}

TEST(PrepareCommand, PlainLinesGetEveryChannelAttributeAndRoute) {
  // Lines with an id and nothing else: slopes from the DEM, drainage area
  // from Hack's law, bottom width from the width and depth power laws,
  // side slope and Manning's n from the defaults; each says so.
  Case c;
  fs::remove(c.network);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}};
  const double y = kY0 - 5000;
  auto line = [](double xa, double ya, double xb, double yb) {
    return fmt::format("LINESTRING ({} {}, {} {})", xa, ya, xb, yb);
  };
  layer.features.push_back({line(kX0 + 1000, y, kX0 + 3000, y), {"up"}});
  layer.features.push_back({line(kX0 + 2000, y + 1500, kX0 + 3000, y), {"trib"}});
  layer.features.push_back({line(kX0 + 3000, y, kX0 + 6000, y), {"down"}});
  fixtures::write(c.network, "GPKG", {layer});
  const auto r = runReachwise(fmt::format("prepare {} --dem {} --out {}", c.network, c.dem, c.out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("bottom widths  3 from hydraulic geometry, 0 from the layer"), std::string::npos) << r.out;
  // up and trib are first order, down (below their confluence) second.
  const std::string by_order = testsupport::summaryValue(r.out, "width by order");
  EXPECT_EQ(by_order.rfind("1: ", 0), 0u) << r.out;
  EXPECT_NE(by_order.find(", 2: "), std::string::npos) << r.out;
  const auto reaches = readReaches(c.out);
  ASSERT_EQ(reaches.size(), 3u);
  for (const auto& [id, f] : reaches) {
    EXPECT_STREQ(f->GetFieldAsString("slope_source"), "dem") << id;
    // Hack (1957) on the longest flow path: concave in L, so down's own
    // estimate (5 km of path) exceeds the sum of up's and trib's.
    EXPECT_STREQ(f->GetFieldAsString("area_source"), "length_relation") << id;
    EXPECT_STREQ(f->GetFieldAsString("bottom_width_source"), "hydraulic_geometry") << id;
    EXPECT_STREQ(f->GetFieldAsString("side_slope_source"), "default") << id;
    EXPECT_STREQ(f->GetFieldAsString("manning_n_source"), "default") << id;
    EXPECT_GT(f->GetFieldAsDouble("bottom_width"), 0.0) << id;
  }
  // Areas add up at the confluence and widths grow downstream with them
  // (w = a A^b with b > 0).
  const double a_up = reaches.at("up")->GetFieldAsDouble("drainage_area_km2");
  const double a_trib = reaches.at("trib")->GetFieldAsDouble("drainage_area_km2");
  const double a_down = reaches.at("down")->GetFieldAsDouble("drainage_area_km2");
  EXPECT_GE(a_down, a_up + a_trib - 1e-9);
  EXPECT_GT(reaches.at("down")->GetFieldAsDouble("bottom_width"), reaches.at("up")->GetFieldAsDouble("bottom_width"));
  // The prepared layer routes as it is.
  const auto rr = routePrepared(c, (c.dir / "plain_routed.gpkg").string());
  EXPECT_EQ(rr.code, 0) << rr.out << rr.err;
}

TEST(PrepareCommand, TheSampleDemGivesBackTheSampleSlopes) {
  // sample-network/dem.tif is built by sample-network/generate.cpp from the
  // bed slopes of network.gpkg: a valley floor 60 m either side of every
  // line at the bed elevation of the nearest line, so sampling along a
  // line reads that line's own long profile back (bilinear between 30 m
  // cells on a linear profile is exact), except near a junction, where
  // cells take the nearer line's bed. plain.gpkg is the same lines with
  // ids only. Every slope is the layer's within 0.1 %, except on short
  // reaches beside a junction (at most 6 of 41), within 10 %.
  const std::string sample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";
  const auto dir = testsupport::testScratchDir();
  const std::string out = (dir / "sample_prepared.gpkg").string();
  fs::remove(out);
  const auto r = runReachwise(
      fmt::format("prepare {}plain.gpkg --dem {}dem.tif --out {}", sample, sample, out));
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  const auto prepared = readReaches(out);
  const auto layer = readReaches(sample + "network.gpkg", false);
  ASSERT_EQ(prepared.size(), layer.size());
  int off = 0;
  for (const auto& [id, f] : layer) {
    const double given = f->GetFieldAsDouble("slope");
    const double derived = prepared.at(id)->GetFieldAsDouble("slope");
    EXPECT_NEAR(derived / given, 1.0, 0.10) << id;
    off += std::abs(derived / given - 1.0) > 1e-3;
    EXPECT_STREQ(prepared.at(id)->GetFieldAsString("slope_source"), "dem") << id;
  }
  EXPECT_LE(off, 6);
}

TEST(PrepareCommand, ADemInTheRunFileDerivesOnTheFlyForCheckAndRoute) {
  // The same derivation as prepare, run by check and route when the run
  // file names a DEM: plain.gpkg (ids only) is refused without it, checks
  // clean with it, and routes to the same outlet peak as prepare + route.
  const std::string sample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";
  const auto dir = testsupport::testScratchDir();
  const std::string run = (dir / "dem_run.toml").string();
  std::ofstream(run) << "[network]\ndem = \"" << sample << "dem.tif\"\n";
  EXPECT_EQ(runReachwise(fmt::format("check {}plain.gpkg", sample)).code, 1);
  const auto checked = runReachwise(fmt::format("check {}plain.gpkg --config {}", sample, run));
  EXPECT_EQ(checked.code, 0) << checked.out << checked.err;

  const std::string prepared = (dir / "prepared.gpkg").string(), direct = (dir / "direct.gpkg").string(),
                    two_step = (dir / "two_step.gpkg").string();
  for (const auto& f : {prepared, direct, two_step}) fs::remove(f);
  ASSERT_EQ(runReachwise(fmt::format("prepare {}plain.gpkg --dem {}dem.tif --out {}", sample, sample, prepared)).code, 0);
  const std::string inflow = sample + "inflow.csv";
  const auto a = runReachwise(fmt::format("route {} --inflow {} --out {} --quiet", prepared, inflow, two_step));
  ASSERT_EQ(a.code, 0) << a.err;
  const auto b = runReachwise(
      fmt::format("route {}plain.gpkg --config {} --inflow {} --out {} --quiet", sample, run, inflow, direct));
  ASSERT_EQ(b.code, 0) << b.err;
  const auto ra = readReaches(two_step, false), rb = readReaches(direct, false);
  ASSERT_EQ(ra.size(), 41u);
  ASSERT_EQ(rb.size(), 41u);
  for (const auto& [id, f] : ra)
    EXPECT_NEAR(rb.at(id)->GetFieldAsDouble("peak_q"), f->GetFieldAsDouble("peak_q"),
                1e-9 * f->GetFieldAsDouble("peak_q")) << id;
}

TEST(PrepareCommand, ElevationOrientationTakesEndElevationsFromTheDem) {
  // The plane falls to the east. "a" is digitised westwards (uphill) and
  // meets "b", digitised eastwards, at x = 4 km: without Z both leave that
  // node (two outlets); with the DEM's end elevations "a" is turned and
  // flows into "b" (one outlet).
  Case c;
  fs::remove(c.network);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}};
  const double y = kY0 - 5000;
  layer.features.push_back({fmt::format("LINESTRING ({} {}, {} {})", kX0 + 4000, y, kX0 + 1000, y), {"a"}});
  layer.features.push_back({fmt::format("LINESTRING ({} {}, {} {})", kX0 + 4000, y, kX0 + 7000, y), {"b"}});
  fixtures::write(c.network, "GPKG", {layer});
  const std::string with = (c.dir / "with_dem.toml").string(), without = (c.dir / "without_dem.toml").string();
  std::ofstream(with) << "[network]\norientation = \"elevation\"\ndem = \"" << c.dem << "\"\n";
  std::ofstream(without) << "[network]\norientation = \"elevation\"\n"
                         << "[network.fields]\nslope = { default = 0.002 }\nmanning_n = { default = 0.035 }\n"
                         << "bottom_width = { default = 5 }\n";
  const auto r = runReachwise(fmt::format("check {} --config {}", c.network, with));
  EXPECT_EQ(r.code, 0) << r.out << r.err;
  EXPECT_NE(r.err.find("warning flipped_line a "), std::string::npos) << r.err;
  EXPECT_EQ(testsupport::summaryValue(r.out, "outlets"), "1") << r.out;
  const auto n = runReachwise(fmt::format("check {} --config {}", c.network, without));
  EXPECT_EQ(testsupport::summaryValue(n.out, "outlets"), "2") << n.out << n.err;
}

TEST(PrepareCommand, UsageErrorsExitTwo) {
  EXPECT_EQ(runReachwise("prepare").code, 2);
  EXPECT_EQ(runReachwise("prepare net.gpkg --out x.gpkg").code, 2);  // no --dem
}
