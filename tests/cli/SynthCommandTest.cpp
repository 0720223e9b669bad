// Runs the built `reachwise synth` and then `reachwise check` on what it
// wrote; the GeoPackage is also read back with GDAL.
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <sys/wait.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "support/Scratch.hpp"

namespace {

const std::string kBinary = REACHWISE_BINARY_DIR "/reachwise";

struct RunResult {
  int code = -1;
  std::string out, err;
};

std::string slurp(const std::filesystem::path& p) {
  std::ifstream in(p);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

RunResult run(const std::string& args) {
  const auto dir = testsupport::testScratchDir();
  const auto out = dir / "synth_out.txt", err = dir / "synth_err.txt";
  const int status =
      std::system(fmt::format("{} {} >{} 2>{}", kBinary, args, out.string(), err.string()).c_str());
  return {WIFEXITED(status) ? WEXITSTATUS(status) : -1, slurp(out), slurp(err)};
}

}  // namespace

TEST(SynthCommand, WritesANetworkThatCheckPassesWithoutErrors) {
  const auto dir = testsupport::testScratchDir();
  const std::string net = (dir / "net.gpkg").string(), nc = (dir / "lat.nc").string(),
                    csv = (dir / "in.csv").string();
  const RunResult synth = run(fmt::format("synth {} --reaches 2500 --outlets 3 --steps 48 --seed 4 "
                                    "--lateral {} --inflow {}",
                                    net, nc, csv));
  ASSERT_EQ(synth.code, 0) << synth.err;
  EXPECT_TRUE(std::filesystem::exists(nc));
  EXPECT_TRUE(std::filesystem::exists(csv));
  const RunResult check = run("check " + net);
  EXPECT_EQ(check.code, 0) << check.err;
  EXPECT_NE(check.out.find("reaches        2500"), std::string::npos) << check.out;
  EXPECT_NE(check.out.find("outlets        3"), std::string::npos) << check.out;
  EXPECT_NE(check.out.find("0 errors, 0 warnings"), std::string::npos) << check.out;
  GDALAllRegister();
  GDALDatasetUniquePtr ds(GDALDataset::Open(net.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  EXPECT_EQ(ds->GetLayer(0)->GetFeatureCount(), 2500);
}

TEST(SynthCommand, RefusesExistingOutputsBeforeWritingAny) {
  const auto dir = testsupport::testScratchDir();
  const std::string net = (dir / "net.gpkg").string(), nc = (dir / "lat.nc").string();
  { std::ofstream(nc) << "old"; }
  const RunResult first = run(fmt::format("synth {} --reaches 100 --lateral {}", net, nc));
  EXPECT_EQ(first.code, 1);
  EXPECT_NE(first.err.find("lat.nc"), std::string::npos) << first.err;
  EXPECT_FALSE(std::filesystem::exists(net));  // nothing written
  EXPECT_EQ(std::filesystem::file_size(nc), 3u);
  const RunResult again = run(fmt::format("synth {} --reaches 100 --lateral {} --overwrite", net, nc));
  EXPECT_EQ(again.code, 0) << again.err;
  EXPECT_GT(std::filesystem::file_size(nc), 3u);
}

TEST(SynthCommand, BadOptionsAreUsageErrors) {
  const auto dir = testsupport::testScratchDir();
  const std::string net = (dir / "net.gpkg").string();
  EXPECT_EQ(run(fmt::format("synth {} --reaches 0", net)).code, 2);
  EXPECT_EQ(run(fmt::format("synth {}", net)).code, 2);
  EXPECT_EQ(run(fmt::format("synth {} --reaches 100 --outlets 50", net)).code, 2);
  EXPECT_EQ(run(fmt::format("synth {} --reaches 100 --start 2026-13-01T00:00", net)).code, 2);
  EXPECT_EQ(run(fmt::format("synth {} --reaches 100 --dt 0.5", net)).code, 2);
  EXPECT_FALSE(std::filesystem::exists(net));
}

// With --lakes: a `lakes` polygon layer that check attaches (every lake on
// a node: one outflowing reach, no reach inside) and route routes, one
// output feature per lake.
TEST(SynthCommand, LakesAreWrittenAttachedAndRouted) {
  const auto dir = testsupport::testScratchDir();
  const std::string net = (dir / "lakes_net.gpkg").string(), nc = (dir / "lakes_lat.nc").string(),
                    out = (dir / "lakes_out.gpkg").string();
  const RunResult synth =
      run(fmt::format("synth {} --reaches 3000 --lakes 40 --steps 72 --seed 6 --lateral {} --overwrite", net, nc));
  ASSERT_EQ(synth.code, 0) << synth.err;
  EXPECT_NE(synth.out.find("40 lakes"), std::string::npos) << synth.out;
  const RunResult check = run(fmt::format("check {} --lakes {}", net, net));
  ASSERT_EQ(check.code, 0) << check.err;
  EXPECT_NE(check.out.find("0 errors, 0 warnings"), std::string::npos) << check.out;
  std::size_t lake_lines = 0, pos = 0;
  while ((pos = check.out.find("\nlake L", pos)) != std::string::npos) ++lake_lines, ++pos;
  EXPECT_EQ(lake_lines, 40u) << check.out;
  const RunResult route = run(fmt::format("route {} --lateral {} --lakes {} --out {} --overwrite --hydrographs outlets",
                                          net, nc, net, out));
  ASSERT_EQ(route.code, 0) << route.err;
  GDALAllRegister();
  GDALDatasetUniquePtr ds(GDALDataset::Open(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* lakes = ds->GetLayerByName("lakes");
  ASSERT_NE(lakes, nullptr);
  EXPECT_EQ(lakes->GetFeatureCount(), 40);
  // More lakes than nodes with a reach flowing in: a usage error, nothing written.
  const std::string none = (dir / "too_many.gpkg").string();
  EXPECT_EQ(run(fmt::format("synth {} --reaches 10 --lakes 10", none)).code, 2);
  EXPECT_FALSE(std::filesystem::exists(none));
}
