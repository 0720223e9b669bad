// The `reachwise check` command line itself: the summary it prints, one
// line per problem, exit codes, and the --problems file. What loading and
// validation find is tested in-process (tests/run/NetworkTest.cpp).
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <filesystem>
#include <regex>
#include <string>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace {

const std::string kSamples = REACHWISE_SOURCE_DIR "/sample-network/";

using Run = testsupport::CliRun;

Run run(const std::string& args) { return testsupport::runReachwise(args); }

std::string summaryValue(const std::string& out, const std::string& key) {
  const std::regex row("(^|\n)" + key + " +([^\n]*)");
  std::smatch m;
  return std::regex_search(out, m, row) ? m[2].str() : std::string("<missing>");
}

/// Problem lines on stderr: `severity code reach_id fid (x, y): sentence`.
std::size_t problemLineCount(const std::string& err) {
  const std::regex line(R"((^|\n)(info|warning|error) \w+ \S+ (\d+|-) \(([-\d.e+]+|-), ([-\d.e+]+|-)\): .+)");
  return static_cast<std::size_t>(std::distance(std::sregex_iterator(err.begin(), err.end(), line), std::sregex_iterator()));
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
