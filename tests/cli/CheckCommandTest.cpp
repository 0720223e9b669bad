// The `reachwise check` command line itself: the summary it prints, one
// line per problem, exit codes, and the --problems file. What loading and
// validation find is tested in-process (tests/run/NetworkTest.cpp).
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <filesystem>
#include <fstream>
#include <map>
#include <regex>
#include <string>

#include "io/NetworkFixtures.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace {

const std::string kSamples = REACHWISE_SOURCE_DIR "/sample-network/";

using Run = testsupport::CliRun;

Run run(const std::string& args) { return testsupport::runReachwise(args); }

using testsupport::summaryValue;

/// Problem lines on stderr: `severity code reach_id fid (x, y): sentence`.
std::size_t problemLineCount(const std::string& err) {
  const std::regex line(R"((^|\n)(info|warning|error) \w+ \S+ (\d+|-) \(([-\d.e+]+|-), ([-\d.e+]+|-)\): .+)");
  return static_cast<std::size_t>(std::distance(std::sregex_iterator(err.begin(), err.end(), line), std::sregex_iterator()));
}

/// Writes a run file whose `[network]` table holds `network_toml`; returns its path.
std::string writeRunFile(const std::filesystem::path& path, const std::string& network_toml) {
  std::ofstream toml(path);
  toml << "[network]\n" << network_toml;
  return path.string();
}

}  // namespace

TEST(CheckCommand, CleanSampleExitsZeroWithSummary) {
  const auto r = run("check " + kSamples + "network.gpkg");
  EXPECT_EQ(r.code, 0) << r.err;
  // The sample has 41 reaches draining to one outlet (sample-network/README.md).
  EXPECT_EQ(summaryValue(r.out, "reaches"), "41");
  EXPECT_EQ(summaryValue(r.out, "outlets"), "1");
  for (const char* key : {"network", "features", "topology", "headwaters", "confluences", "bifurcations",
                          "basins", "total length", "strahler max", "problems"})
    EXPECT_NE(summaryValue(r.out, key), "<missing>") << key;
  EXPECT_EQ(r.err.find("error"), std::string::npos) << r.err;
}

TEST(CheckCommand, ErrorsExitOneWithOneLineEach) {
  const auto out = testsupport::testScratchDir() / "check_problems.gpkg";
  std::filesystem::remove(out);
  const auto r = run(fmt::format("check {}cycle.gpkg --problems {}", kSamples, out.string()));
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("error cycle "), std::string::npos) << r.err;
  EXPECT_NE(summaryValue(r.out, "wrote"), "<missing>") << r.out;
  GDALAllRegister();
  const GDALDatasetUniquePtr ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  ASSERT_NE(ds->GetLayerByName("problems"), nullptr);
  // Every problem line on stderr is a row of the problems layer.
  EXPECT_EQ(static_cast<std::size_t>(ds->GetLayerByName("problems")->GetFeatureCount()), problemLineCount(r.err));
}

TEST(CheckCommand, MissingFieldExitsOneNamingFileAndField) {
  const auto r = run("check " + kSamples + "missing_field.gpkg");
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("missing_field.gpkg"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("slope"), std::string::npos) << r.err;
}

TEST(CheckCommand, NonexistentFileExitsOneNamingIt) {
  const auto r = run("check /nonexistent/rivers_of_nowhere.gpkg");
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("rivers_of_nowhere.gpkg"), std::string::npos) << r.err;
}

TEST(CheckCommand, UnknownLayerExitsOne) {
  const auto r = run("check " + kSamples + "network.gpkg --layer no_such_layer");
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("no_such_layer"), std::string::npos) << r.err;
}

TEST(CheckCommand, UsageErrorsExitTwo) {
  EXPECT_EQ(run("check").code, 2);
  EXPECT_EQ(run(fmt::format("check {}network.gpkg --no-such-flag", kSamples)).code, 2);
}

TEST(CheckCommand, NearMissesAreCountedAndWrittenAsPoints) {
  // Generated lines in UTM 33N (metres): a main stem along x = 500000 and
  // tributaries from the east ending 0.7, 8, 60, 600 and 2000 m short of
  // it, 3000 m apart and 1500 m long. No to_reach field: topology comes
  // from the geometry, with a 0.5 m tolerance from a run file.
  const auto dir = testsupport::testScratchDir();
  const std::string in = (dir / "near_misses.gpkg").string();
  const auto out = dir / "near_misses_problems.gpkg";
  std::filesystem::remove(in);
  std::filesystem::remove(out);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"slope", OFTReal}, {"manning_n", OFTReal},
                  {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
  auto feature = [](const std::string& wkt, const std::string& id) {
    return fixtures::Feature{wkt, {id, "0.001", "0.035", "5", "2"}};
  };
  const double x0 = 500000, y0 = 6000000;
  const std::vector<double> gaps{0.7, 8, 60, 600, 2000};
  layer.features.push_back(feature(fmt::format("LINESTRING ({} {}, {} {})", x0, y0, x0, y0 - 18000), "main"));
  for (std::size_t k = 0; k < gaps.size(); ++k) {
    const double y = y0 - 3000.0 * static_cast<double>(k + 1);
    layer.features.push_back(feature(
        fmt::format("LINESTRING ({} {}, {} {})", x0 + gaps[k] + 1500, y, x0 + gaps[k], y), "t" + std::to_string(k)));
  }
  fixtures::write(in, "GPKG", {layer});

  const std::string config = writeRunFile(dir / "near_misses.toml", "snap_tolerance_m = 0.5\n");
  const auto r = run(fmt::format("check {} --config {} --problems {}", in, config, out.string()));
  EXPECT_EQ(r.code, 1) << r.err;  // t0 (0.7 m) is a probable gap at 0.5 m
  EXPECT_NE(r.err.find("error probable_gap t0 "), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("near_miss"), std::string::npos) << r.err;  // the layer only
  const std::string line = summaryValue(r.out, "near-misses");
  EXPECT_NE(line.find("1 within 1 m (a tolerance of 0.7 m joins them)"), std::string::npos) << line;
  EXPECT_NE(line.find("2 within 10 m (a tolerance of 8 m joins them)"), std::string::npos) << line;
  EXPECT_NE(line.find("3 within 100 m (a tolerance of 60 m joins them)"), std::string::npos) << line;
  EXPECT_NE(line.find("4 within 1000 m (a tolerance of 600 m joins them)"), std::string::npos) << line;
  EXPECT_EQ(line.find("approximate"), std::string::npos) << line;

  GDALAllRegister();
  const GDALDatasetUniquePtr ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* problems = ds->GetLayerByName("problems");
  ASSERT_NE(problems, nullptr);
  std::map<std::string, double> distance;
  for (const auto& f : *problems) {
    if (std::string(f->GetFieldAsString("code")) != "near_miss") continue;
    const std::string id = f->GetFieldAsString("reach_id");
    EXPECT_STREQ(f->GetFieldAsString("severity"), "info");
    EXPECT_STREQ(f->GetFieldAsString("other_reach"), "main");
    distance[id] = f->GetFieldAsDouble("distance_m");
    const auto* pt = f->GetGeometryRef();
    ASSERT_NE(pt, nullptr);
    const std::size_t k = static_cast<std::size_t>(id.back() - '0');
    ASSERT_LT(k, gaps.size());
    EXPECT_NEAR(pt->toPoint()->getX(), x0 + gaps[k], 1e-6);
    EXPECT_NEAR(pt->toPoint()->getY(), y0 - 3000.0 * static_cast<double>(k + 1), 1e-6);
  }
  ASSERT_EQ(distance.size(), 4u);  // 2000 m is beyond the largest band
  for (std::size_t k = 0; k < 4; ++k) EXPECT_NEAR(distance["t" + std::to_string(k)], gaps[k], 1e-6);
}

TEST(CheckCommand, NearMissesOnAGeographicCrsAreInMetres) {
  // Generated lines in EPSG:4326 near the equator: a tributary ends
  // 0.0005 degrees of longitude east of a main stem running north-south,
  // 55.66 m on the WGS 84 ellipsoid there (a = 6 378 137 m: 2 pi a / 360
  // per degree on the equator, 111 319.5 m; the end is at 0.05 degrees
  // south, where it is the same to 1e-6); its headwater and the stem's ends
  // lie more than 0.02 degrees (over 2 km) from every other line.
  const auto dir = testsupport::testScratchDir();
  const std::string in = (dir / "near_miss_4326.gpkg").string();
  std::filesystem::remove(in);
  fixtures::Layer layer;
  layer.epsg = 4326;
  layer.fields = {{"reach_id", OFTString}, {"slope", OFTReal}, {"manning_n", OFTReal},
                  {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
  layer.features = {{"LINESTRING (10 0, 10 -0.1)", {"main", "0.001", "0.035", "5", "2"}},
                    {"LINESTRING (10.0205 -0.05, 10.0005 -0.05)", {"trib", "0.001", "0.035", "5", "2"}}};
  fixtures::write(in, "GPKG", {layer});
  const auto r = run("check " + in);
  const std::string line = summaryValue(r.out, "near-misses");
  EXPECT_NE(line.find("0 within 10 m, 1 within 100 m (a tolerance of 55.7 m joins them)"), std::string::npos)
      << line;
  EXPECT_EQ(line.find("approximate"), std::string::npos) << line;
}

namespace {

/// Generated lines in UTM 33N (metres), no to_reach field: a main stem 4 km
/// long and a tributary from the east ending 30 m short of it, beyond the
/// default 5 m snap tolerance but within the 50 m gap search. Runs `check`
/// with a run file holding `network_toml` under [network].
Run checkTributaryThirtyMetresShort(const std::string& name, const std::string& network_toml) {
  const auto dir = testsupport::testScratchDir();
  const std::string in = (dir / (name + ".gpkg")).string();
  std::filesystem::remove(in);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"slope", OFTReal}, {"manning_n", OFTReal},
                  {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
  auto feature = [](const std::string& wkt, const std::string& id) {
    return fixtures::Feature{wkt, {id, "0.001", "0.035", "5", "2"}};
  };
  const double x0 = 500000, y0 = 6000000;
  layer.features.push_back(feature(fmt::format("LINESTRING ({} {}, {} {})", x0, y0, x0, y0 - 4000), "main"));
  layer.features.push_back(feature(
      fmt::format("LINESTRING ({} {}, {} {})", x0 + 1530, y0 - 2000, x0 + 30, y0 - 2000), "trib"));
  fixtures::write(in, "GPKG", {layer});
  const std::string config = writeRunFile(dir / (name + ".toml"), network_toml);
  return run(fmt::format("check {} --config {}", in, config));
}

}  // namespace

TEST(CheckCommand, AProbableGapIsAnErrorByDefault) {
  const auto r = checkTributaryThirtyMetresShort("gap_default", "");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("error probable_gap trib "), std::string::npos) << r.err;
}

TEST(CheckCommand, UnresolvedGapsWarnLeavesARoutableNetwork) {
  const auto r = checkTributaryThirtyMetresShort("gap_warn", "unresolved_gaps = \"warn\"\n");
  EXPECT_EQ(r.code, 0) << r.err;  // warnings only: check exits 0 (docs/formats.md)
  EXPECT_NE(r.err.find("warning unresolved_gap trib "), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("probable_gap"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("error "), std::string::npos) << r.err;
  // The loose end stays: two separate reaches, each its own outlet.
  EXPECT_EQ(summaryValue(r.out, "reaches"), "2");
  EXPECT_EQ(summaryValue(r.out, "outlets"), "2");
}

TEST(CheckCommand, EndsOfUnconnectedReachesAreNotReported) {
  const auto r = checkTributaryThirtyMetresShort("gap_unconnected", "unconnected = [\"trib\"]\n");
  EXPECT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(r.err.find("probable_gap"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("unresolved_gap"), std::string::npos) << r.err;
}

TEST(CheckCommand, AConnectionInTheRunFileJoinsTheTributary) {
  const auto r = checkTributaryThirtyMetresShort(
      "gap_connect", "[[network.connect]]\nfrom = \"trib\"\nto = \"main\"\n");
  EXPECT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(r.err.find("probable_gap"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("info added_connection trib "), std::string::npos) << r.err;
  // main is cut where trib now joins it: main.1, main.2 and trib, one outlet.
  EXPECT_EQ(summaryValue(r.out, "reaches"), "3");
  EXPECT_EQ(summaryValue(r.out, "outlets"), "1");
  EXPECT_EQ(summaryValue(r.out, "confluences"), "1");
  EXPECT_EQ(summaryValue(r.out, "built"),
            "1 line cut, 0 ends snapped (largest move 0 m), 0 lines reversed, 1 connection added");
}

TEST(CheckCommand, AConnectionWithIdTopologySetsAMissingDownstreamId) {
  const auto dir = testsupport::testScratchDir();
  const std::string in = (dir / "connect_ids.gpkg").string();
  std::filesystem::remove(in);
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"to_reach", OFTString}, {"slope", OFTReal},
                  {"manning_n", OFTReal},  {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
  layer.features = {{"LINESTRING (0 0, 0 -1000)", {"a", "", "0.001", "0.035", "5", "2"}},
                    {"LINESTRING (0 -1000, 0 -2000)", {"b", "", "0.001", "0.035", "5", "2"}}};
  fixtures::write(in, "GPKG", {layer});
  const auto ok = run(fmt::format(
      "check {} --config {}", in,
      writeRunFile(dir / "connect_ids.toml",
                   "topology = \"ids\"\n[[network.connect]]\nfrom = \"a\"\nto = \"b\"\n")));
  EXPECT_EQ(ok.code, 0) << ok.err;
  EXPECT_EQ(summaryValue(ok.out, "outlets"), "1");  // a now flows into b
  EXPECT_NE(ok.err.find("info added_connection a "), std::string::npos) << ok.err;
  const auto point = run(fmt::format(
      "check {} --config {}", in,
      writeRunFile(dir / "connect_ids_point.toml",
                   "topology = \"ids\"\n[[network.connect]]\nfrom = \"a\"\nto = [0, -1000]\n")));
  EXPECT_EQ(point.code, 1) << point.err;
  EXPECT_NE(point.err.find("network.connect[1].to"), std::string::npos) << point.err;
}

TEST(CheckCommand, AConnectionFromAnUnknownReachNamesTheKey) {
  const auto r = checkTributaryThirtyMetresShort(
      "gap_connect_unknown", "[[network.connect]]\nfrom = \"tributary\"\nto = \"main\"\n");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("network.connect[1].from"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("tributary"), std::string::npos) << r.err;
}

TEST(CheckCommand, AnUnconnectedIdNotInTheLayerIsAnErrorNamingKeyAndId) {
  const auto r = checkTributaryThirtyMetresShort("gap_unknown_id", "unconnected = [\"tributary\"]\n");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("network.unconnected"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("tributary"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("gap_unknown_id.toml"), std::string::npos) << r.err;
}

TEST(CheckCommand, AnUnresolvedGapsValueOtherThanErrorOrWarnIsAnErrorNamingTheKey) {
  const auto r = checkTributaryThirtyMetresShort("gap_bad_value", "unresolved_gaps = \"ignore\"\n");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("network.unresolved_gaps"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("\"warn\""), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("gap_bad_value.toml"), std::string::npos) << r.err;
}
