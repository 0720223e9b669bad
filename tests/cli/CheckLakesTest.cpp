// `reachwise check --lakes`: each lake printed with its inflowing and
// outflowing reaches, the same from `[network] lakes` in a run file, and a
// bad lake stopping the check with a message naming file, lake and field.
// The lakes sit on the sample network's nodes: around the node where R2
// flows into R1, and around R1's outlet (a terminal sink).
#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace {

const std::string kNetwork = REACHWISE_SOURCE_DIR "/sample-network/network.gpkg";

std::string square(double x, double y, double half) {
  const auto p = [](double a, double b) { return "[" + std::to_string(a) + "," + std::to_string(b) + "]"; };
  return "[[" + p(x - half, y - half) + "," + p(x + half, y - half) + "," + p(x + half, y + half) + "," +
         p(x - half, y + half) + "," + p(x - half, y - half) + "]]";
}

void writeLakes(const std::filesystem::path& path, const std::string& upper_properties) {
  std::ofstream f(path);
  f << R"({"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::32633"}},)"
    << R"("features":[{"type":"Feature","properties":)" << upper_properties
    << R"(,"geometry":{"type":"Polygon","coordinates":)" << square(511926.51, 5181963.78, 100) << "}},"
    << R"({"type":"Feature","properties":{"lake_id":"Sink","k_h":12},"geometry":{"type":"Polygon","coordinates":)"
    << square(512000, 5180000, 100) << "}}]}";
}

bool has(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

}  // namespace

TEST(CheckLakes, PrintsEachLakeWithItsReaches) {
  testsupport::TempDir dir;
  const auto lakes = dir.path() / "lakes.geojson";
  writeLakes(lakes, R"({"lake_id":"Upper","crest_level_m":210.0,"weir_length_m":30.0})");
  const auto r = testsupport::runReachwise("check " + kNetwork + " --lakes " + lakes.string());
  EXPECT_EQ(r.code, 0) << r.out << r.err;
  EXPECT_TRUE(has(r.out, "lakes          2 (layer lakes of " + lakes.string() + ")")) << r.out;
  EXPECT_TRUE(has(r.out, "lake Upper  area 0.04 km2, in: R2; out: R1\n")) << r.out;
  EXPECT_TRUE(has(r.out, "lake Sink  area 0.04 km2, in: R1; out: - (terminal sink)\n")) << r.out;
  EXPECT_TRUE(has(r.err, "info terminal_lake - 1 (511900.00, 5179900.00): lake Sink has no outflowing reach")) << r.err;

  // The same lakes from the run file, the path relative to it.
  {
    std::ofstream toml(dir.path() / "run.toml");
    toml << "[network]\nlakes = \"lakes.geojson\"\n";
  }
  const auto c = testsupport::runReachwise("check " + kNetwork + " --config " + (dir.path() / "run.toml").string());
  EXPECT_EQ(c.code, 0) << c.err;
  EXPECT_TRUE(has(c.out, "lake Upper  area 0.04 km2, in: R2; out: R1\n")) << c.out;
}

TEST(CheckLakes, BadLakeExitsOneNamingFileLakeAndField) {
  testsupport::TempDir dir;
  const auto lakes = dir.path() / "lakes.geojson";
  writeLakes(lakes, R"({"lake_id":"Upper","crest_level_m":210.0,"weir_length_m":"wide"})");
  const auto r = testsupport::runReachwise("check " + kNetwork + " --lakes " + lakes.string());
  EXPECT_EQ(r.code, 1) << r.out << r.err;
  EXPECT_TRUE(has(r.err, lakes.string()) && has(r.err, "lake Upper") && has(r.err, "field weir_length_m") &&
              has(r.err, "\"wide\" is not a number"))
      << r.err;
}
