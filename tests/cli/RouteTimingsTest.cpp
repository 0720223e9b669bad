// `route --timings`: the stages of a run with their wall and CPU times,
// which add up to the total, printed also with --quiet; also from the run
// file (`timings = true`). The times themselves vary from run to run; what
// is checked is the table's shape and arithmetic.

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";

struct Row {
  std::string name;
  double wall = -1, cpu = -1;
};

/// The rows of the timings table (stage name, wall s, CPU s).
std::vector<Row> timingRows(const std::string& out) {
  std::vector<Row> rows;
  std::istringstream in(out.substr(out.find("timings (")));
  std::string line;
  std::getline(in, line);  // the heading
  while (std::getline(in, line) && line.rfind("  peak", 0) != 0) {
    std::istringstream words(line);
    std::vector<std::string> w;
    for (std::string x; words >> x;) w.push_back(x);
    if (w.size() < 3) break;
    Row r;
    r.cpu = std::stod(w.back());
    r.wall = std::stod(w[w.size() - 2]);
    for (std::size_t k = 0; k + 2 < w.size(); ++k) r.name += (k ? " " : "") + w[k];
    rows.push_back(r);
  }
  return rows;
}

}  // namespace

TEST(RouteTimings, StagesAddUpToTheTotal) {
  testsupport::TempDir dir;
  const auto r = testsupport::runReachwise("route " + kSample + "network.gpkg --inflow " + kSample +
                                           "inflow.csv --lakes " + kSample + "lakes.gpkg --out " +
                                           (dir.path() / "out.gpkg").string() + " --quiet --timings");
  ASSERT_EQ(r.code, 0) << r.err;
  ASSERT_NE(r.out.find("timings ("), std::string::npos) << r.out;
  const auto rows = timingRows(r.out);
  ASSERT_GE(rows.size(), 5u);
  std::vector<std::string> names;
  double wall = 0, cpu = 0;
  for (std::size_t k = 0; k + 1 < rows.size(); ++k) {
    names.push_back(rows[k].name);
    EXPECT_GE(rows[k].wall, 0.0) << rows[k].name;
    EXPECT_GE(rows[k].cpu, 0.0) << rows[k].name;
    wall += rows[k].wall;
    cpu += rows[k].cpu;
  }
  EXPECT_EQ(rows.back().name, "total");
  // Each figure is printed to 1 ms: the sum of the rounded stages is within
  // half a millisecond per row of the rounded total.
  const double rounding = 0.0005 * static_cast<double>(rows.size());
  EXPECT_NEAR(wall, rows.back().wall, rounding);
  EXPECT_NEAR(cpu, rows.back().cpu, rounding);
  const auto has = [&](const std::string& stage) {
    for (const auto& n : names)
      if (n.rfind(stage, 0) == 0) return true;
    return false;
  };
  EXPECT_TRUE(has("reading ")) << r.out;
  EXPECT_TRUE(has("reading the forcing")) << r.out;
  EXPECT_TRUE(has("routing")) << r.out;
  EXPECT_TRUE(has("writing the results")) << r.out;
  EXPECT_NE(r.out.find("peak resident memory"), std::string::npos);
  EXPECT_EQ(r.out.find("outlet"), std::string::npos);  // --quiet keeps the summary out
}

TEST(RouteTimings, OnlyWhenAskedForAndFromTheRunFile) {
  testsupport::TempDir dir;
  const std::string run = "route " + kSample + "network.gpkg --inflow " + kSample + "inflow.csv --quiet --out ";
  const auto plain = testsupport::runReachwise(run + (dir.path() / "a.gpkg").string());
  ASSERT_EQ(plain.code, 0) << plain.err;
  EXPECT_EQ(plain.out.find("timings ("), std::string::npos);
  std::ofstream(dir.path() / "run.toml") << "[route]\ntimings = true\n";
  const auto from_file = testsupport::runReachwise(run + (dir.path() / "b.gpkg").string() + " --config " +
                                                   (dir.path() / "run.toml").string());
  ASSERT_EQ(from_file.code, 0) << from_file.err;
  EXPECT_NE(from_file.out.find("timings ("), std::string::npos) << from_file.out;
}
