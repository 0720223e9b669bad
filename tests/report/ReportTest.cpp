// The run report, checked on the shipped sample network routed in-library:
// figures are parsed back by independent readers (GDAL's CPL XML parser for
// SVG, cairo's PNG reader), table values are compared with the GeoPackage
// the same run wrote (read back with GDAL/OGR), links are resolved against
// the folder, and existing folders are protected.
#include <cairo.h>
#include <cpl_minixml.h>
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <optional>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "support/ReportPage.hpp"
#include "support/Scratch.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Forcing.hpp"
#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"
#include "reachwise/report/Report.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/run/Forcing.hpp"

namespace {

namespace fs = std::filesystem;
using namespace reachwise;
using testsupport::readText;
using testsupport::tableRows;
using testsupport::trim;

const fs::path kSample = fs::path(REACHWISE_SOURCE_DIR) / "sample-network";

/// The sample network routed once per process: GeoPackage and captured
/// series, as `reachwise route` produces them.
struct SampleRun {
  fs::path dir;
  network::ReachTable table;
  std::optional<network::ReachGraph> graph;
  network::NetworkPlan plan;
  std::unique_ptr<io::MemoryForcingSource> forcing;
  std::unique_ptr<report::ReportSeries> series;
  routing::NetworkResults results;
  io::RunInfo info;
  fs::path gpkg;

  SampleRun() {
    dir = fs::temp_directory_path() / fmt::format("reachwise_ReportTest_run_{}", ::getpid());
    fs::remove_all(dir);
    fs::create_directories(dir);
    network::ProblemList problems;
    table = io::readNetwork((kSample / "network.gpkg").string(), io::ReadOptions{}, problems);
    graph.emplace(table);
    network::mergeProblems(problems, network::validate(*graph));
    if (network::hasErrors(problems)) throw std::runtime_error("sample network has errors");
    plan = graph->freeze();
    forcing = std::make_unique<io::MemoryForcingSource>(
        io::readForcingCsv(kSample / "inflow.csv", kSample / "lateral.csv"));
    const routing::TimeAxis& axis = forcing->axis();
    gpkg = dir / "results.gpkg";
    io::GpkgResultsWriter writer(gpkg, table, plan, axis);
    series = std::make_unique<report::ReportSeries>(plan, axis);
    io::SeriesFanOut fan({&writer, series.get()});
    const run::PlanForcing adapter(*forcing, plan);
    results = routing::routeNetwork(plan, axis, adapter, routing::NetworkRouteOptions{}, &fan);
    info.inputs = {(kSample / "network.gpkg").string(), (kSample / "inflow.csv").string(),
                   (kSample / "lateral.csv").string()};
    info.method = "vpmc";
    info.command_line = "reachwise route (test)";
    info.warnings = results.warnings;
    writer.writeSummaries(results, info);
    writer.commit();
  }
  ~SampleRun() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }

  report::ReportInputs inputs(bool us = false) const {
    return report::ReportInputs{table, plan, results, info, gpkg.string(), us};
  }
};

const SampleRun& sampleRun() {
  static const SampleRun run;
  return run;
}

/// Every src= and href= value of the page.
std::vector<std::string> references(const std::string& html) {
  static const std::regex attr(R"re(\b(?:src|href)\s*=\s*["']([^"']*)["'])re", std::regex::icase);
  std::vector<std::string> out;
  for (auto it = std::sregex_iterator(html.begin(), html.end(), attr); it != std::sregex_iterator(); ++it)
    out.push_back((*it)[1].str());
  return out;
}

struct GpkgReach {
  std::string id;
  double peak_q = NAN, attenuation_pct = NAN;
};

/// The `reaches` layer of the run's GeoPackage, read with OGR.
std::vector<GpkgReach> gpkgReaches(const fs::path& gpkg) {
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  EXPECT_TRUE(ds);
  std::vector<GpkgReach> out;
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("reaches");
  EXPECT_NE(layer, nullptr);
  if (!layer) return out;
  for (auto& f : *layer) {
    GpkgReach r;
    r.id = f->GetFieldAsString("reach_id");
    if (f->IsFieldSetAndNotNull(f->GetFieldIndex("peak_q"))) r.peak_q = f->GetFieldAsDouble("peak_q");
    if (f->IsFieldSetAndNotNull(f->GetFieldIndex("attenuation_pct")))
      r.attenuation_pct = f->GetFieldAsDouble("attenuation_pct");
    out.push_back(r);
  }
  return out;
}

/// peak_q of every node of the `nodes` layer, by node_id.
std::map<std::string, double> gpkgNodePeaks(const fs::path& gpkg) {
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  std::map<std::string, double> out;
  EXPECT_TRUE(ds);
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("nodes");
  EXPECT_NE(layer, nullptr);
  if (!layer) return out;
  for (auto& f : *layer) out[f->GetFieldAsString("node_id")] = f->GetFieldAsDouble("peak_q");
  return out;
}

/// Ids of the confluence nodes whose branch peaks lie within an hour
/// (`nodes` layer: kind = confluence, branch_spread_h <= 1).
std::set<std::string> gpkgCoincidentConfluences(const fs::path& gpkg) {
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  std::set<std::string> out;
  EXPECT_TRUE(ds);
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("nodes");
  EXPECT_NE(layer, nullptr);
  if (!layer) return out;
  for (auto& f : *layer) {
    const int spread = f->GetFieldIndex("branch_spread_h");
    if (std::string(f->GetFieldAsString("kind")) == "confluence" && f->IsFieldSetAndNotNull(spread) &&
        f->GetFieldAsDouble(spread) <= 1.0)
      out.insert(f->GetFieldAsString("node_id"));
  }
  return out;
}

class ReportTest : public ::testing::Test {
protected:
  void SetUp() override { GDALAllRegister(); }
  testsupport::TempDir tmp;
  fs::path report() const { return tmp.path() / "report"; }
  std::string writeAndRead(bool us = false) {
    const SampleRun& run = sampleRun();
    report::writeReport(report(), run.inputs(us), *run.series, false);
    return readText(report() / "index.html");
  }
};

TEST_F(ReportTest, EveryFigureExistsAndParses) {
  const std::string html = writeAndRead();
  const auto refs = references(html);
  std::size_t svgs = 0, outlets = 0, confluences = 0;
  for (const auto& ref : refs) {
    const fs::path file = report() / ref;
    ASSERT_TRUE(fs::exists(file)) << ref;
    if (file.extension() != ".svg") continue;
    // GDAL's CPL XML parser: an independent reader that refuses malformed XML.
    CPLXMLNode* root = CPLParseXMLString(readText(file).c_str());
    ASSERT_NE(root, nullptr) << ref;
    const CPLXMLNode* svg = CPLGetXMLNode(root, "=svg");
    ASSERT_NE(svg, nullptr) << ref << " has no <svg> root";
    EXPECT_GT(std::atof(CPLGetXMLValue(svg, "width", "0")), 300) << ref;
    EXPECT_GT(std::atof(CPLGetXMLValue(svg, "height", "0")), 150) << ref;
    // Drawn content, not an empty page: cairo writes glyphs and lines as paths.
    EXPECT_NE(readText(file).find("<path"), std::string::npos) << ref;
    CPLDestroyXMLNode(root);
    ++svgs;
    outlets += ref.rfind("outlet-", 0) == 0;
    confluences += ref.rfind("confluence-", 0) == 0;
  }
  const auto& plan = sampleRun().plan;
  std::size_t plan_outlets = 0, plan_confluences = 0;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    plan_outlets += plan.isOutlet(i);
    plan_confluences += plan.up_offset[i + 1] - plan.up_offset[i] >= 2;
  }
  EXPECT_NE(std::find(refs.begin(), refs.end(), "map.svg"), refs.end());
  EXPECT_NE(std::find(refs.begin(), refs.end(), "timing.svg"), refs.end());
  EXPECT_EQ(outlets, plan_outlets);                                    // every outlet of the sample
  EXPECT_EQ(confluences, std::min<std::size_t>(6, plan_confluences));  // the top confluences
  EXPECT_EQ(svgs, 2 + outlets + confluences);
}

TEST_F(ReportTest, PageReferencesOnlyFilesInsideTheFolder) {
  const std::string html = writeAndRead();
  const auto refs = references(html);
  EXPECT_FALSE(refs.empty());
  for (const auto& ref : refs) {
    EXPECT_EQ(ref.find(':'), std::string::npos) << ref << " (a URL or drive)";
    EXPECT_FALSE(fs::path(ref).is_absolute()) << ref;
    EXPECT_EQ(ref.find(".."), std::string::npos) << ref;
    EXPECT_TRUE(fs::is_regular_file(report() / ref)) << ref;
  }
  EXPECT_EQ(html.find("<script"), std::string::npos);
  EXPECT_EQ(html.find("url("), std::string::npos);
  EXPECT_EQ(html.find("@import"), std::string::npos);
  // Every file in the folder (but the marker) is an output the page uses.
  for (const auto& e : fs::directory_iterator(report())) {
    const std::string name = e.path().filename().string();
    if (name == "index.html" || name == report::kReportMarker) continue;
    EXPECT_NE(std::find(refs.begin(), refs.end(), name), refs.end()) << name << " is not shown";
  }
}

TEST_F(ReportTest, TopPeakAndAttenuationMatchTheGeoPackage) {
  const std::string html = writeAndRead();
  const auto reaches = gpkgReaches(sampleRun().gpkg);
  ASSERT_EQ(reaches.size(), sampleRun().plan.size());
  const auto top_peak = *std::max_element(reaches.begin(), reaches.end(),
                                          [](const auto& a, const auto& b) { return a.peak_q < b.peak_q; });
  const auto top_att = *std::max_element(reaches.begin(), reaches.end(), [](const auto& a, const auto& b) {
    return (std::isnan(a.attenuation_pct) ? -1e300 : a.attenuation_pct) <
           (std::isnan(b.attenuation_pct) ? -1e300 : b.attenuation_pct);
  });

  const auto peak_rows = tableRows(html, "top-peak");
  ASSERT_EQ(peak_rows.size(), 10u);
  ASSERT_GE(peak_rows[0].size(), 3u);
  EXPECT_EQ(trim(peak_rows[0][1]), top_peak.id);
  EXPECT_EQ(trim(peak_rows[0][2]), fmt::format("{:.2f}", top_peak.peak_q));
  // Rows go down in peak flow, as the GeoPackage's values do.
  std::vector<double> gpkg_peaks;
  for (const auto& r : reaches) gpkg_peaks.push_back(r.peak_q);
  std::sort(gpkg_peaks.rbegin(), gpkg_peaks.rend());
  for (std::size_t k = 0; k < peak_rows.size(); ++k)
    EXPECT_EQ(trim(peak_rows[k][2]), fmt::format("{:.2f}", gpkg_peaks[k])) << "row " << k + 1;

  const auto att_rows = tableRows(html, "top-attenuation");
  ASSERT_FALSE(att_rows.empty());
  ASSERT_GE(att_rows[0].size(), 5u);
  EXPECT_EQ(trim(att_rows[0][1]), top_att.id);
  EXPECT_EQ(trim(att_rows[0][3]), fmt::format("{:.2f}", top_att.peak_q));
  EXPECT_EQ(trim(att_rows[0][4]), fmt::format("{:.2f}", top_att.attenuation_pct));
}

// The run summary's worst reaches by event volume error are the five
// largest |event_volume_error_pct| of the GeoPackage's reaches layer, with
// the same values.
TEST_F(ReportTest, WorstEventVolumeErrorsMatchTheGeoPackage) {
  const std::string html = writeAndRead();
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(sampleRun().gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* layer = ds->GetLayerByName("reaches");
  ASSERT_NE(layer, nullptr);
  std::vector<std::pair<double, std::string>> errors;  // (event error, reach id)
  for (auto& f : *layer)
    if (f->IsFieldSetAndNotNull(f->GetFieldIndex("event_volume_error_pct")))
      errors.emplace_back(f->GetFieldAsDouble("event_volume_error_pct"), f->GetFieldAsString("reach_id"));
  std::stable_sort(errors.begin(), errors.end(),
                   [](const auto& a, const auto& b) { return std::abs(a.first) > std::abs(b.first); });
  const auto rows = tableRows(html, "worst-event-volume");
  ASSERT_EQ(rows.size(), std::min<std::size_t>(5, errors.size()));
  ASSERT_FALSE(rows.empty());
  for (std::size_t k = 0; k < rows.size(); ++k) {
    ASSERT_GE(rows[k].size(), 5u);
    EXPECT_EQ(trim(rows[k][2]), fmt::format("{:.3f}", errors[k].first)) << "row " << k + 1;
  }
  EXPECT_EQ(trim(rows[0][1]), errors[0].second);
}

TEST_F(ReportTest, CoincidentConfluencesMatchTheNodesLayer) {
  const std::string html = writeAndRead();
  const std::set<std::string> expected = gpkgCoincidentConfluences(sampleRun().gpkg);
  std::set<std::string> shown;
  for (const auto& row : tableRows(html, "coincident"))
    if (!row.empty()) shown.insert(trim(row[0]));
  EXPECT_EQ(shown, expected);
  EXPECT_EQ(html.find("id=\"coincident-none\"") != std::string::npos, expected.empty());
}

TEST_F(ReportTest, MajorConfluencesAreTheLargestCombinedPeaksOfTheNodesLayer) {
  const std::string html = writeAndRead();
  const auto peaks = gpkgNodePeaks(sampleRun().gpkg);
  const auto rows = tableRows(html, "major-confluences");
  ASSERT_FALSE(rows.empty());
  // The sample has fewer confluences than the report's candidates, so the
  // rows are the nodes layer's confluences with the largest peak_q.
  std::vector<double> confluence_peaks;
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(sampleRun().gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* nodes = ds->GetLayerByName("nodes");
  ASSERT_NE(nodes, nullptr);
  nodes->SetAttributeFilter("kind = 'confluence'");
  for (auto& f : *nodes) confluence_peaks.push_back(f->GetFieldAsDouble("peak_q"));
  std::sort(confluence_peaks.rbegin(), confluence_peaks.rend());
  ASSERT_EQ(rows.size(), std::min<std::size_t>(6, confluence_peaks.size()));
  for (std::size_t k = 0; k < rows.size(); ++k) {
    const std::string id = trim(rows[k][0]);
    ASSERT_TRUE(peaks.count(id)) << id << " is not in the nodes layer";
    EXPECT_EQ(trim(rows[k][1]), fmt::format("{:.2f}", peaks.at(id))) << id;
    EXPECT_EQ(trim(rows[k][1]), fmt::format("{:.2f}", confluence_peaks[k])) << "row " << k + 1;
  }
}

TEST_F(ReportTest, CarriesTheCautionAndTheGeoPackagePath) {
  const std::string html = writeAndRead();
  std::string caution = io::kResultsCaution;
  ASSERT_EQ(caution.find_first_of("<>&\"'"), std::string::npos) << "compare escaped text instead";
  EXPECT_NE(html.find(caution), std::string::npos);
  EXPECT_NE(html.find(sampleRun().gpkg.string()), std::string::npos);
}

TEST_F(ReportTest, UsCustomaryUnitsConvertTheTables) {
  const std::string html = writeAndRead(true);
  const auto reaches = gpkgReaches(sampleRun().gpkg);
  const auto top = *std::max_element(reaches.begin(), reaches.end(),
                                     [](const auto& a, const auto& b) { return a.peak_q < b.peak_q; });
  // 1 ft = 0.3048 m exactly (international foot, 1959).
  const double cfs = top.peak_q / (0.3048 * 0.3048 * 0.3048);
  const auto rows = tableRows(html, "top-peak");
  ASSERT_FALSE(rows.empty());
  EXPECT_EQ(trim(rows[0][2]), fmt::format("{:.2f}", cfs));
  EXPECT_NE(html.find("peak flow (cfs)"), std::string::npos);
  EXPECT_EQ(html.find("m³/s"), std::string::npos);
}

TEST_F(ReportTest, ExistingReportIsRefusedWithoutOverwrite) {
  const SampleRun& run = sampleRun();
  report::writeReport(report(), run.inputs(), *run.series, false);
  const fs::path page = report() / "index.html";
  { std::ofstream(page, std::ios::app) << "<!-- edited -->"; }
  const std::string before = readText(page);
  EXPECT_THROW(report::writeReport(report(), run.inputs(), *run.series, false), InputError);
  EXPECT_EQ(readText(page), before);
  report::writeReport(report(), run.inputs(), *run.series, true);
  EXPECT_NE(readText(page), before);
  EXPECT_EQ(readText(page).find("<!-- edited -->"), std::string::npos);
  // No temporary folder is left beside it.
  for (const auto& e : fs::directory_iterator(tmp.path()))
    EXPECT_EQ(e.path().filename(), "report") << e.path();
}

TEST_F(ReportTest, FolderWithOtherFilesIsNeverReplaced) {
  const SampleRun& run = sampleRun();
  fs::create_directories(report());
  { std::ofstream(report() / "results.gpkg") << "not a report"; }
  EXPECT_THROW(report::writeReport(report(), run.inputs(), *run.series, true), InputError);
  EXPECT_TRUE(fs::exists(report() / "results.gpkg"));
  EXPECT_FALSE(fs::exists(report() / "index.html"));
  // An empty folder (made by a caller beforehand) is fine to fill.
  const fs::path empty = tmp.path() / "empty";
  fs::create_directories(empty);
  report::writeReport(empty, run.inputs(), *run.series, true);
  EXPECT_TRUE(fs::exists(empty / "index.html"));
}

TEST_F(ReportTest, LargeNetworksGetAPngMap) {
  const SampleRun& run = sampleRun();
  report::ReportInputs in = run.inputs();
  in.svg_map_max_reaches = 0;  // treat the sample as large
  report::writeReport(report(), in, *run.series, false);
  const auto refs = references(readText(report() / "index.html"));
  ASSERT_NE(std::find(refs.begin(), refs.end(), "map.png"), refs.end());
  // Read back by cairo's own PNG decoder (libpng underneath).
  cairo_surface_t* png = cairo_image_surface_create_from_png((report() / "map.png").c_str());
  ASSERT_EQ(cairo_surface_status(png), CAIRO_STATUS_SUCCESS);
  EXPECT_GE(cairo_image_surface_get_width(png), 960);
  EXPECT_GE(cairo_image_surface_get_height(png), 400);
  // Not a blank image: some pixels are neither white nor the map's background.
  cairo_surface_flush(png);
  const unsigned char* data = cairo_image_surface_get_data(png);
  const int stride = cairo_image_surface_get_stride(png), h = cairo_image_surface_get_height(png);
  std::size_t dark = 0;
  for (int y = 0; y < h; ++y)
    for (int x = 0; x < cairo_image_surface_get_width(png); ++x) {
      const unsigned char* p = data + y * stride + 4 * x;  // native-endian ARGB32
      if (p[0] < 150 && p[1] < 150) ++dark;
    }
  EXPECT_GT(dark, 1000u);
  cairo_surface_destroy(png);
}

/// One straight reach, routed in-library: a network without confluences.
struct SingleReach {
  network::ReachTable table;
  std::optional<network::ReachGraph> graph;
  network::NetworkPlan plan;
  routing::TimeAxis axis;
  std::unique_ptr<report::ReportSeries> series;
  routing::NetworkResults results;
  io::RunInfo info;

  explicit SingleReach(bool geographic) {
    OGRSpatialReference srs;
    srs.importFromEPSG(geographic ? 4326 : 32633);
    char* wkt = nullptr;
    srs.exportToWkt(&wkt);
    table.crs_wkt = wkt;
    CPLFree(wkt);
    table.geographic = geographic;
    table.source = "single.gpkg";
    table.layer = "reaches";
    network::ReachRecord r;
    r.id = "S1";
    r.fid = 1;
    // 3 km eastwards: in UTM metres, or along 46° N in degrees.
    r.line = geographic ? std::vector<network::Point3>{{15.0, 46.0, NAN}, {15.039, 46.0, NAN}}
                        : std::vector<network::Point3>{{500000, 5100000, NAN}, {503000, 5100000, NAN}};
    r.length_m = 3000;
    r.geometry_length_m = 3000;
    r.section.bottom_width_m = 10;
    r.section.side_slope = 2;
    r.section.manning_n = 0.035;
    r.section.bed_slope = 0.001;
    table.reaches.push_back(r);
    graph.emplace(table);
    plan = graph->freeze();
    axis.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 0);
    axis.dt_s = 1800;
    axis.steps = 96;
    routing::MemoryForcing forcing;
    forcing.inflow_m3s.assign(1, std::vector<double>(axis.steps, 1.0));
    for (std::size_t k = 10; k < 30; ++k)  // a triangular flood wave, peak 21 m3/s at step 20
      forcing.inflow_m3s[0][k] = 1.0 + 20.0 * (1.0 - std::abs(static_cast<double>(k) - 20.0) / 10.0);
    series = std::make_unique<report::ReportSeries>(plan, axis);
    results = routing::routeNetwork(plan, axis, forcing, routing::NetworkRouteOptions{}, series.get());
    info.method = "vpmc";
  }
  report::ReportInputs inputs() const { return report::ReportInputs{table, plan, results, info, "", false}; }
};

TEST_F(ReportTest, NetworkWithoutConfluencesStillGetsEveryPart) {
  for (const bool geographic : {false, true}) {
    SCOPED_TRACE(geographic ? "geographic CRS" : "projected CRS");
    const SingleReach net(geographic);
    const fs::path dir = tmp.path() / (geographic ? "geo" : "utm");
    report::writeReport(dir, net.inputs(), *net.series, false);
    const std::string html = readText(dir / "index.html");
    for (const char* f : {"map.svg", "outlet-1.svg"}) {
      CPLXMLNode* root = CPLParseXMLString(readText(dir / f).c_str());
      ASSERT_NE(root, nullptr) << f;
      EXPECT_NE(CPLGetXMLNode(root, "=svg"), nullptr) << f;
      CPLDestroyXMLNode(root);
    }
    EXPECT_FALSE(fs::exists(dir / "confluence-1.svg"));
    EXPECT_FALSE(fs::exists(dir / "timing.svg"));  // no chart of nothing
    for (const auto& ref : references(html)) EXPECT_TRUE(fs::is_regular_file(dir / ref)) << ref;
    EXPECT_NE(html.find("The network has no confluences"), std::string::npos);
    EXPECT_NE(html.find("id=\"coincident-none\""), std::string::npos);
    const auto rows = tableRows(html, "top-peak");
    ASSERT_EQ(rows.size(), 1u);
    EXPECT_EQ(trim(rows[0][1]), "S1");
    EXPECT_EQ(trim(rows[0][2]), fmt::format("{:.2f}", net.results.reaches[0].peak_q_m3s));
  }
}

TEST_F(ReportTest, UnwritableFolderIsAnInputErrorNamingIt) {
  const SampleRun& run = sampleRun();
  const fs::path file = tmp.path() / "plain-file";
  { std::ofstream(file) << "x"; }
  try {
    report::writeReport(file / "report", run.inputs(), *run.series, false);
    FAIL() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_NE(e.where().file.find("plain-file"), std::string::npos) << e.what();
  }
  // A path without a folder name of its own is refused before anything is written.
  EXPECT_THROW(report::writeReport(".", run.inputs(), *run.series, true), InvalidParameter);
  // ".." names the parent, a folder of other files: never replaced, even with overwrite.
  EXPECT_THROW(report::writeReport(tmp.path() / "..", run.inputs(), *run.series, true), InputError);
  EXPECT_TRUE(fs::exists(file));
}

TEST(ReportSeriesTest, CapturedOutletSeriesEqualsTheGeoPackageHydrograph) {
  GDALAllRegister();
  const SampleRun& run = sampleRun();
  ASSERT_FALSE(run.series->outlets().empty());
  const std::uint32_t outlet = run.series->outlets().front();
  ASSERT_TRUE(run.series->has(outlet));
  const auto q = run.series->series(outlet);
  ASSERT_EQ(q.size(), run.results.axis.steps);
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(run.gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* layer = ds->GetLayerByName("hydrographs");
  ASSERT_NE(layer, nullptr);
  layer->SetAttributeFilter(fmt::format("reach_id = '{}'", run.plan.reach_id[outlet]).c_str());
  std::vector<double> stored;
  for (auto& f : *layer) stored.push_back(f->GetFieldAsDouble("q"));
  ASSERT_EQ(stored.size(), q.size());
  for (std::size_t k = 0; k < q.size(); ++k) EXPECT_DOUBLE_EQ(q[k], stored[k]) << "step " << k;
  // Every branch of every candidate confluence is captured.
  for (const std::uint32_t c : run.series->confluences())
    for (std::uint32_t e = run.plan.up_offset[c]; e < run.plan.up_offset[c + 1]; ++e)
      EXPECT_TRUE(run.series->has(run.plan.up_reach[e])) << run.plan.reach_id[run.plan.up_reach[e]];
}

/// A comb: main stem m0 (outlet) .. m(n-1) (head), a tributary joining at
/// the top of every main-stem reach but the head. Filled by hand in
/// topological order (only the fields ReportSeries reads).
network::NetworkPlan comb(std::size_t n) {
  network::NetworkPlan p;
  std::vector<std::uint32_t> main_index(n);
  std::vector<std::vector<std::uint32_t>> ups;
  const auto add = [&](std::string id, std::vector<std::uint32_t> up) {
    p.reach_id.push_back(std::move(id));
    ups.push_back(std::move(up));
    return static_cast<std::uint32_t>(p.reach_id.size() - 1);
  };
  main_index[n - 1] = add(fmt::format("m{}", n - 1), {});
  for (std::size_t i = n - 1; i-- > 0;) {
    const std::uint32_t t = add(fmt::format("t{}", i), {});
    main_index[i] = add(fmt::format("m{}", i), {main_index[i + 1], t});
  }
  std::vector<std::vector<std::uint32_t>> downs(p.reach_id.size());
  p.up_offset.push_back(0);
  for (std::uint32_t r = 0; r < ups.size(); ++r) {
    for (const auto u : ups[r]) {
      p.up_reach.push_back(u);
      p.up_fraction.push_back(1.0);
      downs[u].push_back(r);
    }
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
  }
  p.down_offset.push_back(0);
  for (const auto& d : downs) {
    p.down_reach.insert(p.down_reach.end(), d.begin(), d.end());
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  return p;
}

TEST(ReportSeriesTest, ChoosesABoundedSetByUpstreamNetwork) {
  const std::size_t n = 500;  // 499 confluences, far more than the report keeps
  const network::NetworkPlan plan = comb(n);
  routing::TimeAxis axis;
  axis.steps = 3;
  report::ReportSeries series(plan, axis);
  ASSERT_EQ(series.outletCount(), 1u);
  ASSERT_EQ(series.outlets().size(), 1u);
  EXPECT_EQ(plan.reach_id[series.outlets()[0]], "m0");
  // The confluences with the largest upstream networks of a comb are the
  // lowest on the main stem: m0, m1, ... (counted by hand from the shape).
  ASSERT_EQ(series.confluences().size(), report::ReportSeries::kMaxCandidateConfluences);
  for (std::size_t k = 0; k < series.confluences().size(); ++k)
    EXPECT_EQ(plan.reach_id[series.confluences()[k]], fmt::format("m{}", k));
  // Only the chosen reaches (leaving reach + two branches, plus the outlet)
  // keep their series.
  const std::vector<double> q = {1, 2, 3};
  std::size_t kept = 0;
  for (std::uint32_t r = 0; r < plan.size(); ++r) {
    series.write(r, q, {}, {});
    kept += series.has(r);
  }
  EXPECT_EQ(kept, 2 * report::ReportSeries::kMaxCandidateConfluences + 1);
  EXPECT_TRUE(series.has(series.outlets()[0]));
  EXPECT_EQ(series.series(series.outlets()[0]).size(), 3u);
  EXPECT_TRUE(series.series(static_cast<std::uint32_t>(0)).empty());  // the head of the stem, m499
}

}  // namespace

namespace {

/// A braid routed in memory and written to a GeoPackage: H → U, which
/// splits into M (0.7, the main branch) and S (0.3, a side arm); both
/// rejoin in D (a side-arm return); T joins D's water in E (a confluence).
/// M and S are alike, so their peaks reach D close together.
struct Braid {
  fs::path dir;
  network::ReachTable table;
  std::optional<network::ReachGraph> graph;
  network::NetworkPlan plan;
  routing::TimeAxis axis;
  std::unique_ptr<report::ReportSeries> series;
  routing::NetworkResults results;
  io::RunInfo info;
  fs::path gpkg;

  explicit Braid(const fs::path& where) : dir(where) {
    fs::create_directories(dir);
    OGRSpatialReference srs;
    srs.importFromEPSG(32633);
    char* wkt = nullptr;
    srs.exportToWkt(&wkt);
    table.crs_wkt = wkt;
    CPLFree(wkt);
    table.source = "braid.gpkg";
    table.layer = "reaches";
    const auto reach = [&](const char* id, const char* to, double x0, double y0, double x1, double y1, double split) {
      network::ReachRecord r;
      r.id = id;
      r.fid = static_cast<std::int64_t>(table.reaches.size()) + 1;
      if (to) r.to_reach = to;
      r.line = {{x0, y0, NAN}, {x1, y1, NAN}};
      r.length_m = 3000;
      r.geometry_length_m = std::hypot(x1 - x0, y1 - y0);
      r.split = split;
      r.section.bottom_width_m = 10;
      r.section.side_slope = 2;
      r.section.manning_n = 0.035;
      r.section.bed_slope = 0.001;
      table.reaches.push_back(r);
    };
    reach("H", "U", 500000, 5094000, 500000, 5097000, NAN);
    reach("U", "M;S", 500000, 5097000, 500000, 5100000, NAN);
    reach("M", "D", 500000, 5100000, 499000, 5103000, 0.7);
    reach("S", "D", 500000, 5100000, 501000, 5103000, 0.3);
    reach("D", "E", 500000, 5103000, 500000, 5106000, NAN);
    reach("T", "E", 503000, 5106000, 500000, 5106000, NAN);
    reach("E", nullptr, 500000, 5106000, 500000, 5109000, NAN);
    graph.emplace(table);
    if (network::hasErrors(network::validate(*graph))) throw std::runtime_error("braid has errors");
    plan = graph->freeze();
    axis.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 0);
    axis.dt_s = 1800;
    axis.steps = 96;
    routing::MemoryForcing forcing;
    forcing.inflow_m3s.assign(plan.size(), {});
    for (std::uint32_t i = 0; i < plan.size(); ++i) {
      if (plan.reach_id[i] == "T") forcing.inflow_m3s[i].assign(axis.steps, 2.0);
      if (plan.reach_id[i] != "H") continue;
      forcing.inflow_m3s[i].assign(axis.steps, 1.0);
      for (std::size_t k = 10; k < 30; ++k)  // a triangular flood wave, peak 41 m3/s at step 20
        forcing.inflow_m3s[i][k] = 1.0 + 40.0 * (1.0 - std::abs(static_cast<double>(k) - 20.0) / 10.0);
    }
    gpkg = dir / "braid.gpkg";
    io::GpkgResultsWriter writer(gpkg, table, plan, axis);
    series = std::make_unique<report::ReportSeries>(plan, axis);
    io::SeriesFanOut fan({&writer, series.get()});
    results = routing::routeNetwork(plan, axis, forcing, routing::NetworkRouteOptions{}, &fan);
    info.method = "vpmc";
    writer.writeSummaries(results, info);
    writer.commit();
  }
  report::ReportInputs inputs() const { return report::ReportInputs{table, plan, results, info, gpkg.string(), false}; }
};

}  // namespace

TEST_F(ReportTest, BraidHasOneBifurcationNodeListingBothSharesAndASideArmReturn) {
  const Braid braid(tmp.path() / "braid");
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(braid.gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  OGRLayer* nodes = ds->GetLayerByName("nodes");
  ASSERT_NE(nodes, nullptr);
  std::map<std::string, std::string> kind;
  std::size_t bifurcations = 0;
  for (auto& f : *nodes) {
    const std::string id = f->GetFieldAsString("node_id");
    kind[id] = f->GetFieldAsString("kind");
    if (kind[id] != "bifurcation") {
      EXPECT_FALSE(f->IsFieldSetAndNotNull(f->GetFieldIndex("branches"))) << id;
      continue;
    }
    ++bifurcations;
    EXPECT_EQ(id, "B:U");
    EXPECT_EQ(std::string(f->GetFieldAsString("branches")), "M:0.7;S:0.3");
    EXPECT_EQ(f->GetFieldAsInteger("branch_count"), 2);
    // At the bottom of U, carrying U's outflow peak.
    const auto* p = dynamic_cast<const OGRPoint*>(f->GetGeometryRef());
    ASSERT_NE(p, nullptr);
    EXPECT_DOUBLE_EQ(p->getY(), 5100000.0);
    const auto u = std::find(braid.plan.reach_id.begin(), braid.plan.reach_id.end(), "U") - braid.plan.reach_id.begin();
    EXPECT_DOUBLE_EQ(f->GetFieldAsDouble("peak_q"), braid.results.reaches[static_cast<std::size_t>(u)].peak_q_m3s);
  }
  EXPECT_EQ(bifurcations, 1u);
  EXPECT_EQ(kind.count("N:M") + kind.count("N:S"), 0u) << "one node per bifurcation, not one per branch";
  EXPECT_EQ(kind["N:D"], "side_arm_return");
  EXPECT_EQ(kind["N:E"], "confluence");

  // The reaches layer shows the share each branch took.
  OGRLayer* reaches = ds->GetLayerByName("reaches");
  ASSERT_NE(reaches, nullptr);
  for (auto& f : *reaches) {
    const std::string id = f->GetFieldAsString("reach_id");
    const int k = f->GetFieldIndex("split");
    if (id == "M" || id == "S") {
      EXPECT_DOUBLE_EQ(f->GetFieldAsDouble(k), id == "M" ? 0.7 : 0.3);
    } else {
      EXPECT_FALSE(f->IsFieldSetAndNotNull(k)) << id;
    }
  }
}

TEST_F(ReportTest, SideArmReturnIsLeftOutOfTheConfluenceCountsAndRanking) {
  const Braid braid(tmp.path() / "braid");
  // The side arm and the main branch peak within an hour of each other at
  // D: as a confluence it would be listed as coinciding.
  const routing::NodeSummary* d = nullptr;
  for (const auto& n : braid.results.nodes)
    if (n.node_id == "N:D") d = &n;
  ASSERT_NE(d, nullptr);
  ASSERT_EQ(d->kind, routing::NodeKind::SideArmReturn);
  ASSERT_LE(d->branch_spread_s, 3600.0);

  report::writeReport(report(), braid.inputs(), *braid.series, false);
  const std::string html = readText(report() / "index.html");
  for (const char* table : {"coincident", "major-confluences"})
    for (const auto& row : tableRows(html, table))
      if (!row.empty()) {
        EXPECT_NE(trim(row[0]), "N:D") << table;
      }
  // E is the network's only confluence, and the only one ranked.
  const auto major = tableRows(html, "major-confluences");
  ASSERT_EQ(major.size(), 1u);
  EXPECT_EQ(trim(major[0][0]), "N:E");
  EXPECT_NE(html.find(" 1 confluence,"), std::string::npos);
}

// The braid's bifurcation (U splits into M and S) gets the map's
// bifurcation symbol, and the map's caption names it; the sample network,
// which has none, does not mention bifurcations.
TEST_F(ReportTest, BifurcationsGetAMapSymbolNamedInTheCaption) {
  const Braid braid(tmp.path() / "braid");
  std::size_t bifurcations = 0;
  for (const auto& n : braid.results.nodes) bifurcations += n.kind == routing::NodeKind::Bifurcation;
  ASSERT_EQ(bifurcations, 1u);
  report::writeReport(report(), braid.inputs(), *braid.series, false);
  EXPECT_NE(readText(report() / "index.html").find("bifurcations as diamonds"), std::string::npos);
  fs::remove_all(report());
  EXPECT_EQ(writeAndRead().find("bifurcation"), std::string::npos);
}
