// The run report's lakes, checked on the shipped sample network with its
// reservoir (sample-network/lakes.gpkg) routed in-library: the lakes table
// against the `lakes` layer the same run wrote (read back with GDAL/OGR),
// the panel and map parsed by GDAL's CPL XML parser, US customary units by
// the exact foot, and the ordering and caps of many lakes against lakes
// made up in the test.
#include <cpl_minixml.h>
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <memory>
#include <regex>
#include <string>
#include <vector>

#include "reachwise/report/Report.hpp"
#include "reachwise/run/Route.hpp"
#include "reachwise/run/RoutedLakes.hpp"
#include "support/ReportPage.hpp"
#include "support/Scratch.hpp"

namespace {

namespace fs = std::filesystem;
using namespace reachwise;
using testsupport::readText;
using testsupport::tableRows;
using testsupport::trim;

const fs::path kSample = fs::path(REACHWISE_SOURCE_DIR) / "sample-network";

/// The sample storm routed once per process through the reservoir, the
/// results GeoPackage written, and the report's series captured by a
/// ReportSeries of our own (on a plan frozen from the same network: the
/// same order), so that each test can write a report of its choice.
struct LakeRun {
  fs::path dir;
  std::unique_ptr<run::LoadedNetwork> net;
  network::NetworkPlan plan;
  std::unique_ptr<report::ReportSeries> series;
  run::RouteSummary summary;
  fs::path gpkg;

  LakeRun() {
    dir = fs::temp_directory_path() / fmt::format("reachwise_ReportLakesTest_run_{}", ::getpid());
    fs::remove_all(dir);
    fs::create_directories(dir);
    run::RouteRequest request;
    request.network.path = (kSample / "network.gpkg").string();
    request.network.lakes = (kSample / "lakes.gpkg").string();
    request.forcing.inflow = (kSample / "inflow.csv").string();
    request.forcing.lateral = (kSample / "lateral.csv").string();
    gpkg = dir / "results.gpkg";
    request.outputs.gpkg = gpkg.string();
    net = run::loadNetwork(request.network);
    plan = run::routablePlan(*net);
    const run::RunForcing forcing(request.forcing, plan, net->config.units);
    series = std::make_unique<report::ReportSeries>(plan, forcing.axis());
    request.sinks = {series.get()};
    summary = run::route(request);
    if (summary.plan.reach_id != plan.reach_id) throw std::runtime_error("plans differ");
  }
  ~LakeRun() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }

  report::ReportInputs inputs(bool us = false) const {
    report::ReportInputs in{summary.network->table, plan, summary.results, summary.info, gpkg.string(), us};
    in.lakes = run::routedLakes(*summary.network, summary.plan, summary.lakes);
    return in;
  }
};

const LakeRun& lakeRun() {
  static const LakeRun run;
  return run;
}

struct GpkgLake {
  std::string id, reach;
  double inflow_peak = NAN, outflow_peak = NAN, attenuation = NAN, lag_h = NAN, peak_level = NAN;
  double inflow_peak_t = NAN, outflow_peak_t = NAN;  // unix seconds
};

/// Instant of an OGR date-time field (TZ flag 100 = UTC, 15 minutes a unit).
double readInstant(OGRFeature& f, const char* field) {
  int y, mo, d, h, mi, tz;
  float s;
  EXPECT_TRUE(f.GetFieldAsDateTime(f.GetFieldIndex(field), &y, &mo, &d, &h, &mi, &s, &tz));
  const double offset_s = tz >= 100 ? (tz - 100) * 15 * 60.0 : 0.0;
  return static_cast<double>(testsupport::utcSeconds(y, mo, d, h, mi)) + s - offset_s;
}

std::vector<GpkgLake> gpkgLakes(const fs::path& gpkg) {
  std::vector<GpkgLake> out;
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  EXPECT_TRUE(ds);
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("lakes");
  EXPECT_NE(layer, nullptr);
  if (!layer) return out;
  for (auto& f : *layer) {
    GpkgLake l;
    l.id = f->GetFieldAsString("lake_id");
    l.reach = f->GetFieldAsString("reach_id");
    l.inflow_peak = f->GetFieldAsDouble("inflow_peak_m3s");
    l.outflow_peak = f->GetFieldAsDouble("outflow_peak_m3s");
    l.attenuation = f->GetFieldAsDouble("attenuation_pct");
    l.lag_h = f->GetFieldAsDouble("lag_h");
    l.peak_level = f->GetFieldAsDouble("peak_level_m");
    l.inflow_peak_t = readInstant(*f, "inflow_peak_time");
    l.outflow_peak_t = readInstant(*f, "outflow_peak_time");
    out.push_back(l);
  }
  return out;
}

/// `YYYY-MM-DD HH:MM` of an instant at +01:00 (the sample storm's offset,
/// sample-network/inflow.csv), rounded to the minute, by glibc's gmtime.
std::string localMinute(double unix_s) {
  const std::time_t t = static_cast<std::time_t>(std::round((unix_s + 3600) / 60.0) * 60.0);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%d %H:%M", &tm);
  return buf;
}

/// Every `fill:rgb(r%,g%,b%)` of an SVG (cairo's SVG surface writes fills so).
std::vector<std::array<double, 3>> fills(const std::string& svg) {
  static const std::regex rgb(R"(fill:\s*rgb\(([0-9.]+)%,\s*([0-9.]+)%,\s*([0-9.]+)%\))");
  std::vector<std::array<double, 3>> out;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), rgb); it != std::sregex_iterator(); ++it)
    out.push_back({std::stod((*it)[1]) / 100, std::stod((*it)[2]) / 100, std::stod((*it)[3]) / 100});
  return out;
}

/// A pale blue: the water colour of the map (blue above 90 %, red and green
/// above 70 % and below blue); no colour of the discharge ramp is so pale.
bool paleBlue(const std::array<double, 3>& c) { return c[2] > 0.9 && c[0] > 0.7 && c[0] < c[2] && c[1] < c[2]; }

class ReportLakesTest : public ::testing::Test {
protected:
  void SetUp() override { GDALAllRegister(); }
  testsupport::TempDir tmp;
  fs::path report() const { return tmp.path() / "report"; }
  std::string write(const report::ReportInputs& in) {
    report::writeReport(report(), in, *lakeRun().series, false);
    return readText(report() / "index.html");
  }
};

TEST_F(ReportLakesTest, TableMatchesTheLakesLayerOfTheGeoPackage) {
  const std::string html = write(lakeRun().inputs());
  const auto lakes = gpkgLakes(lakeRun().gpkg);
  ASSERT_EQ(lakes.size(), 1u);  // the sample's one reservoir (sample-network/README.md)
  const auto rows = tableRows(html, "lakes");
  ASSERT_EQ(rows.size(), 1u);
  ASSERT_EQ(rows[0].size(), 9u);
  const GpkgLake& g = lakes[0];
  EXPECT_EQ(trim(rows[0][0]), "RES1");
  EXPECT_EQ(trim(rows[0][1]), "R13");  // the dam stands where R14 flows into R13 (sample-network/README.md)
  EXPECT_EQ(g.id, "RES1");
  EXPECT_EQ(g.reach, "R13");
  EXPECT_EQ(trim(rows[0][2]), fmt::format("{:.2f}", g.inflow_peak));
  EXPECT_EQ(trim(rows[0][3]), localMinute(g.inflow_peak_t));
  EXPECT_EQ(trim(rows[0][4]), fmt::format("{:.2f}", g.outflow_peak));
  EXPECT_EQ(trim(rows[0][5]), localMinute(g.outflow_peak_t));
  EXPECT_EQ(trim(rows[0][6]), fmt::format("{:.1f}", g.attenuation));
  EXPECT_EQ(trim(rows[0][7]), fmt::format("{:.2f}", g.lag_h));
  EXPECT_EQ(trim(rows[0][8]), fmt::format("{:.2f}", g.peak_level));
  // Attenuation as docs/formats.md defines it, from the row's own peaks: the
  // peaks are rounded to 0.005, which moves the ratio by at most
  // 100 · 0.005 (1/in + out/in²) ≈ 0.04 % here; the cell is rounded to 0.05.
  const double in = std::stod(rows[0][2]), out = std::stod(rows[0][4]);
  EXPECT_NEAR(std::stod(rows[0][6]), 100 * (1 - out / in), 0.1);
  // The lag is the time between the two peaks the row shows (each rounded
  // to the minute: within 1 min = 0.017 h, rounded to 0.005 h).
  EXPECT_NEAR(std::stod(rows[0][7]), (g.outflow_peak_t - g.inflow_peak_t) / 3600, 0.025);
  // The caution of every report stays, and the lakes section carries its own.
  EXPECT_NE(html.find(io::kResultsCaution), std::string::npos);
  EXPECT_NE(html.find("Level-pool routing takes the lake's surface as level"), std::string::npos);
  // The run summary lists the lakes file among the inputs.
  EXPECT_NE(html.find("<code>" + (kSample / "lakes.gpkg").string() + "</code>"), std::string::npos);
}

TEST_F(ReportLakesTest, PanelAndMapShowTheLake) {
  const std::string html = write(lakeRun().inputs());
  // The page shows the panel and names it.
  EXPECT_NE(html.find("src=\"lake-1.svg\""), std::string::npos);
  EXPECT_NE(html.find("Inflow, outflow and level of Lake RES1"), std::string::npos);
  EXPECT_NE(html.find("1 lake"), std::string::npos);
  // The key numbers name the lake with its attenuation (the lakes layer's, 1 decimal).
  const auto lakes = gpkgLakes(lakeRun().gpkg);
  ASSERT_EQ(lakes.size(), 1u);
  EXPECT_NE(html.find("<div class=\"k\">lake attenuation</div><div class=\"v\">" +
                      fmt::format("{:.1f} %", lakes[0].attenuation) + "</div><div class=\"d\">lake RES1:"),
            std::string::npos);
  for (const char* f : {"lake-1.svg", "map.svg"}) {
    const std::string svg = readText(report() / f);
    CPLXMLNode* root = CPLParseXMLString(svg.c_str());  // an independent reader refusing malformed XML
    ASSERT_NE(root, nullptr) << f;
    EXPECT_NE(CPLGetXMLNode(root, "=svg"), nullptr) << f;
    CPLDestroyXMLNode(root);
  }
  // The map fills the outline (and its legend swatch) in water blue; a
  // report of the same run without lakes has no such fill.
  const auto with = fills(readText(report() / "map.svg"));
  EXPECT_GE(std::count_if(with.begin(), with.end(), paleBlue), 2);
  report::ReportInputs none = lakeRun().inputs();
  none.lakes.clear();
  const fs::path other = tmp.path() / "no-lakes";
  report::writeReport(other, none, *lakeRun().series, false);
  const auto without = fills(readText(other / "map.svg"));
  EXPECT_EQ(std::count_if(without.begin(), without.end(), paleBlue), 0);
  const std::string plain = readText(other / "index.html");
  EXPECT_EQ(plain.find("<table id=\"lakes\""), std::string::npos);
  EXPECT_EQ(plain.find("Lakes and reservoirs"), std::string::npos);
  EXPECT_FALSE(fs::exists(other / "lake-1.svg"));
}

TEST_F(ReportLakesTest, UsCustomaryUnitsConvertTheLakeTable) {
  const std::string html = write(lakeRun().inputs(true));
  const auto lakes = gpkgLakes(lakeRun().gpkg);
  ASSERT_EQ(lakes.size(), 1u);
  const auto rows = tableRows(html, "lakes");
  ASSERT_EQ(rows.size(), 1u);
  ASSERT_EQ(rows[0].size(), 9u);
  // 1 ft = 0.3048 m exactly (international foot, 1959).
  const double ft = 0.3048, cfs = ft * ft * ft;
  EXPECT_EQ(trim(rows[0][2]), fmt::format("{:.2f}", lakes[0].inflow_peak / cfs));
  EXPECT_EQ(trim(rows[0][4]), fmt::format("{:.2f}", lakes[0].outflow_peak / cfs));
  EXPECT_EQ(trim(rows[0][8]), fmt::format("{:.2f}", lakes[0].peak_level / ft));
  EXPECT_NE(html.find("peak level (ft)"), std::string::npos);
  EXPECT_NE(html.find("inflow peak (cfs)"), std::string::npos);
}

// Twenty lakes made up in the test on the sample network: the table lists
// them by inflow peak, largest first, and panels go to the twelve largest.
TEST_F(ReportLakesTest, ManyLakesAreRankedByInflowPeak) {
  const LakeRun& run = lakeRun();
  const std::size_t steps = run.summary.results.axis.steps;
  const std::size_t n = 20;
  std::vector<network::LakeRecord> records(n);
  std::vector<routing::LakeRouting> routings(n);
  report::ReportInputs in = run.inputs();
  in.lakes.clear();
  for (std::size_t k = 0; k < n; ++k) {
    // Lake k: a square of 200 m at the top of reach k, inflow peak 10 + 3 (k mod 7) + k/10 m³/s
    // (all different), the outflow half of it, the level 100 m + outflow/10.
    const auto c = run.plan.top[k];
    records[k].lake_id = fmt::format("L{:02d}", k);
    records[k].rings = {{{c.x - 100, c.y - 100}, {c.x + 100, c.y - 100}, {c.x + 100, c.y + 100}, {c.x - 100, c.y + 100}}};
    const double peak = 10.0 + 3.0 * static_cast<double>(k % 7) + static_cast<double>(k) / 10.0;
    auto& r = routings[k];
    r.routed = true;
    for (std::size_t t = 0; t < steps; ++t) {
      const double q = 1.0 + (peak - 1.0) * std::exp(-std::pow((static_cast<double>(t) - 40.0) / 8.0, 2.0));
      r.inflow_m3s.push_back(q);
      r.result.outflow_m3s.push_back(0.5 * q);
      r.result.level_m.push_back(100.0 + 0.05 * q);
    }
    in.lakes.push_back({&records[k], run.plan.reach_id[k], static_cast<std::uint32_t>(k), &r});
  }
  const std::string html = write(in);
  const auto rows = tableRows(html, "lakes");
  ASSERT_EQ(rows.size(), n);
  std::vector<std::pair<double, std::string>> expected;  // (peak, id): the peaks as built above
  for (std::size_t k = 0; k < n; ++k)
    expected.emplace_back(10.0 + 3.0 * static_cast<double>(k % 7) + static_cast<double>(k) / 10.0,
                          fmt::format("L{:02d}", k));
  std::sort(expected.rbegin(), expected.rend());
  for (std::size_t k = 0; k < n; ++k) {
    EXPECT_EQ(trim(rows[k][0]), expected[k].second) << "row " << k + 1;
    // The Gaussian peaks on a sample (t = 40), so the peak is that sample.
    EXPECT_EQ(trim(rows[k][2]), fmt::format("{:.2f}", expected[k].first)) << "row " << k + 1;
    EXPECT_EQ(trim(rows[k][6]), "50.0") << "outflow half the inflow";
    EXPECT_EQ(trim(rows[k][7]), "0.00") << "peaks at the same time";
  }
  std::size_t panels = 0;
  for (const auto& e : fs::directory_iterator(report())) panels += e.path().filename().string().rfind("lake-", 0) == 0;
  EXPECT_EQ(panels, 12u);
  EXPECT_NE(html.find("alt=\"Inflow, outflow and level of Lake " + expected[0].second + "\""), std::string::npos);
  EXPECT_NE(html.find("alt=\"Inflow, outflow and level of Lake " + expected[11].second + "\""), std::string::npos);
  EXPECT_EQ(html.find("alt=\"Inflow, outflow and level of Lake " + expected[12].second + "\""), std::string::npos);
}

}  // namespace
