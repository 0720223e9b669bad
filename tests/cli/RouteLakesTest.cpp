// `reachwise route --lakes`: the console summary names the lakes, one line
// each, largest attenuation first, at most ten, then how many more. A lake
// (a linear reservoir) sits on every node of the sample network that has a
// reach flowing into it; the printed figures are checked against the
// lake_series.csv the same run writes.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "reachwise/run/Network.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

struct Printed {
  std::string id;
  double in = 0, out = 0, attenuation = 0, lag_h = 0, level = 0;
};

/// The `lake ...` lines of the summary.
std::vector<Printed> printedLakes(const std::string& out) {
  const std::regex line(R"(\n  lake (\S+): peak ([0-9.]+) -> ([0-9.]+) m3/s, attenuation (-?[0-9.]+) %, lag (-?[0-9.]+) h, peak level (-?[0-9.]+) m)");
  std::vector<Printed> lakes;
  for (auto it = std::sregex_iterator(out.begin(), out.end(), line); it != std::sregex_iterator(); ++it) {
    const auto& m = *it;
    lakes.push_back({m[1], std::stod(m[2]), std::stod(m[3]), std::stod(m[4]), std::stod(m[5]), std::stod(m[6])});
  }
  return lakes;
}

struct Series {
  std::vector<double> level, inflow, outflow;
};

/// lake_series.csv by lake id (columns: lake_id,time,level_m,storage_m3,inflow_m3s,outflow_m3s).
std::map<std::string, Series> readSeries(const fs::path& p) {
  std::ifstream in(p);
  std::map<std::string, Series> out;
  std::string line;
  std::getline(in, line);
  EXPECT_EQ(line, "lake_id,time,level_m,storage_m3,inflow_m3s,outflow_m3s");
  while (std::getline(in, line)) {
    std::vector<std::string> c;
    std::stringstream s(line);
    for (std::string cell; std::getline(s, cell, ',');) c.push_back(cell);
    if (c.size() != 6) {
      ADD_FAILURE() << line;
      continue;
    }
    auto& series = out[c[0]];
    series.level.push_back(std::stod(c[2]));
    series.inflow.push_back(std::stod(c[4]));
    series.outflow.push_back(std::stod(c[5]));
  }
  return out;
}

}  // namespace

TEST(RouteLakes, SummaryListsTheTenMostAttenuatingLakesThenCountsTheRest) {
  testsupport::TempDir dir;
  // A 20 m square on the top node of every reach with a reach flowing into
  // it: the reaches meeting there flow in, the one leaving carries the
  // outflow (nodes lie hundreds of metres apart). k from 1 to 6 h.
  const auto net = run::loadNetwork({kSample + "network.gpkg", "", "", ""});
  ASSERT_FALSE(net->hasErrors());
  const auto plan = net->graph->freeze();
  std::ostringstream json;
  json.precision(12);
  json << R"({"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::32633"}},"features":[)";
  std::size_t n = 0;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    if (plan.up_offset[i + 1] == plan.up_offset[i]) continue;
    const auto p = plan.top[i];
    const double h = 10;
    json << (n ? "," : "") << R"({"type":"Feature","properties":{"lake_id":"L)" << plan.reach_id[i]
         << R"(","k_h":)" << 1 + static_cast<double>(n % 6) << R"(},"geometry":{"type":"Polygon","coordinates":[[)"
         << "[" << p.x - h << "," << p.y - h << "],[" << p.x + h << "," << p.y - h << "],[" << p.x + h << ","
         << p.y + h << "],[" << p.x - h << "," << p.y + h << "],[" << p.x - h << "," << p.y - h << "]]]}}";
    ++n;
  }
  json << "]}";
  ASSERT_GT(n, 10u) << "the test needs more lakes than the summary lists";
  std::ofstream(dir.path() / "lakes.geojson") << json.str();

  const auto csv = dir.path() / "csv";
  const auto r = testsupport::runReachwise("route " + kSample + "network.gpkg --inflow " + kSample +
                                           "inflow.csv --lateral " + kSample + "lateral.csv --lakes " +
                                           (dir.path() / "lakes.geojson").string() + " --out " +
                                           (dir.path() / "out.gpkg").string() + " --csv " + csv.string());
  ASSERT_EQ(r.code, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("\nlakes: " + std::to_string(n) + " routed, largest attenuation first:\n"), std::string::npos)
      << r.out;
  const auto printed = printedLakes(r.out);
  ASSERT_EQ(printed.size(), 10u) << r.out;
  EXPECT_NE(r.out.find("  ... and " + std::to_string(n - 10) + " more lake(s)"), std::string::npos) << r.out;

  // Each printed figure against the lake's own series in lake_series.csv,
  // computed here: a peak interpolated between samples is at least the
  // highest sample and, on these smooth hydrographs, within 2 % of it
  // (the parabola through three hourly samples; common practice);
  // attenuation is 100 (1 − out / in) of the printed peaks (to their
  // printed rounding); the peak level is the highest level sample.
  const auto series = readSeries(csv / "lake_series.csv");
  ASSERT_EQ(series.size(), n);
  std::map<std::string, double> attenuation;  // from the samples' peaks, for the order
  for (const auto& [id, s] : series) {
    const double in = *std::max_element(s.inflow.begin(), s.inflow.end());
    const double out = *std::max_element(s.outflow.begin(), s.outflow.end());
    attenuation[id] = 100 * (1 - out / in);
  }
  for (const auto& p : printed) {
    ASSERT_TRUE(series.count(p.id)) << p.id;
    const Series& s = series.at(p.id);
    const double in = *std::max_element(s.inflow.begin(), s.inflow.end());
    const double out = *std::max_element(s.outflow.begin(), s.outflow.end());
    const double level = *std::max_element(s.level.begin(), s.level.end());
    EXPECT_GE(p.in, in - 0.005) << p.id;   // printed to 0.01
    EXPECT_LE(p.in, in * 1.02 + 0.005) << p.id;
    EXPECT_GE(p.out, out - 0.005) << p.id;
    EXPECT_LE(p.out, out * 1.02 + 0.005) << p.id;
    EXPECT_NEAR(p.level, level, 0.005) << p.id;
    // Rounding of the peaks to 0.01 moves 100 (1 − out/in) by at most
    // 100 · 0.005 (1/in + out/in²); the attenuation itself is printed to 0.1.
    EXPECT_NEAR(p.attenuation, 100 * (1 - p.out / p.in), 0.05 + 0.5 * (1 / p.in + p.out / (p.in * p.in))) << p.id;
    EXPECT_GT(p.lag_h, 0.0) << p.id << ": a reservoir delays the peak (its outflow peaks where it crosses the inflow)";
  }
  // Largest attenuation first: the printed values do not increase, and no
  // lake left out attenuated more than the last one printed. The order uses
  // the interpolated peaks; from the samples' peaks (each within 2 % of
  // those, above) the attenuation may differ by about 2 points.
  for (std::size_t k = 1; k < printed.size(); ++k) EXPECT_LE(printed[k].attenuation, printed[k - 1].attenuation);
  std::vector<std::string> shown;
  for (const auto& p : printed) shown.push_back(p.id);
  for (const auto& [id, a] : attenuation) {
    if (std::find(shown.begin(), shown.end(), id) == shown.end()) {
      EXPECT_LE(a, printed.back().attenuation + 2.0) << id << " attenuates more than the lakes listed";
    }
  }

  // --quiet prints nothing.
  const auto q = testsupport::runReachwise("route " + kSample + "network.gpkg --inflow " + kSample +
                                           "inflow.csv --lakes " + (dir.path() / "lakes.geojson").string() +
                                           " --out " + (dir.path() / "q.gpkg").string() + " --quiet");
  EXPECT_EQ(q.code, 0) << q.err;
  EXPECT_EQ(q.out, "");
}
