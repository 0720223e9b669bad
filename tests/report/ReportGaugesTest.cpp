// The run report's gauges, checked on the shipped sample network routed
// in-library twice: once to write the hydrographs of R1 and R13 as CSV,
// then with observations derived from them (R13's outflow × 1.25 with every
// seventh value missing, R1's × 0.5) and the report written by the run
// itself. For observations o = c·s (s the simulated outflow) the scores
// follow from their definitions (Gupta et al. 2009 for KGE; docs/methods.md
// "Skill scores"): r = 1, α = σ_s/σ_o = 1/c, β = μ_s/μ_o = 1/c,
// KGE = 1 − √2·|1/c − 1|, percent bias = peak error = 100 (1/c − 1), timing 0.
// The table is also checked against the `gauges` layer the same run wrote
// (read back with GDAL/OGR), and NSE against a sum written out in the test.
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "reachwise/report/Report.hpp"
#include "reachwise/run/Route.hpp"
#include "support/ReportPage.hpp"
#include "support/Scratch.hpp"

namespace {

namespace fs = std::filesystem;
using namespace reachwise;
using testsupport::readText;
using testsupport::tableRows;
using testsupport::trim;

const fs::path kSample = fs::path(REACHWISE_SOURCE_DIR) / "sample-network";

/// The scale factors c of the observations (o = c·s), by reach id.
const std::map<std::string, double> kScale = {{"R13", 1.25}, {"R1", 0.5}};

run::RouteRequest sampleRequest() {
  run::RouteRequest request;
  request.network.path = (kSample / "network.gpkg").string();
  request.forcing.inflow = (kSample / "inflow.csv").string();
  request.forcing.lateral = (kSample / "lateral.csv").string();
  return request;
}

/// Splits a CSV line at commas (the hydrographs file quotes nothing).
std::vector<std::string> cells(const std::string& line) {
  std::vector<std::string> out;
  std::stringstream row(line);
  std::string c;
  while (std::getline(row, c, ',')) out.push_back(c);
  return out;
}

struct GaugeRun {
  fs::path dir, gpkg, report_dir;
  std::unique_ptr<run::LoadedNetwork> net;
  network::NetworkPlan plan;
  std::unique_ptr<report::ReportSeries> series;
  run::RouteSummary summary;
  /// What the test wrote as observations (NaN: NA) and the simulated
  /// outflow it scaled, by reach id, one value per step.
  std::map<std::string, std::vector<double>> observed, simulated;

  GaugeRun() {
    dir = fs::temp_directory_path() / fmt::format("reachwise_ReportGaugesTest_run_{}", ::getpid());
    fs::remove_all(dir);
    fs::create_directories(dir);
    run::RouteRequest first = sampleRequest();
    first.outputs.csv_dir = (dir / "csv").string();
    first.outputs.hydrographs = "R1,R13";
    run::route(first);

    // Long-form observations (docs/formats.md, "Observed hydrographs").
    std::ifstream in(dir / "csv" / "hydrographs.csv");
    std::ofstream obs(dir / "observed.csv");
    obs << "reach_id,time,discharge\n";
    std::string line;
    std::getline(in, line);
    std::size_t n = 0;
    while (std::getline(in, line)) {
      const auto c = cells(line);
      if (c.size() < 3) continue;
      const double q = std::stod(c[2]), scale = kScale.at(c[0]);
      const bool missing = c[0] == "R13" && n++ % 7 == 3;
      simulated[c[0]].push_back(q);
      observed[c[0]].push_back(missing ? NAN : scale * q);
      obs << c[0] << "," << c[1] << "," << (missing ? std::string("NA") : fmt::format("{}", scale * q)) << "\n";
    }
    obs.close();

    run::RouteRequest request = sampleRequest();
    request.gauges.observed = (dir / "observed.csv").string();
    gpkg = dir / "results.gpkg";
    report_dir = dir / "report";
    request.outputs.gpkg = gpkg.string();
    request.outputs.report_dir = report_dir.string();
    net = run::loadNetwork(request.network);
    plan = run::routablePlan(*net);
    const run::RunForcing forcing(request.forcing, plan, net->config.units);
    series = std::make_unique<report::ReportSeries>(plan, forcing.axis());
    request.sinks = {series.get()};
    summary = run::route(request);
    if (summary.plan.reach_id != plan.reach_id) throw std::runtime_error("plans differ");
  }
  ~GaugeRun() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }

  /// The gauges as the run handed them to its own report (src/run/Route.cpp).
  std::vector<io::GaugeOutput> gaugeRows() const {
    std::vector<io::GaugeOutput> rows;
    for (std::size_t g = 0; g < summary.gauges.gauges.size(); ++g) {
      const auto& gauge = summary.gauges.gauges[g];
      const network::Point2 at = gauge.point.value_or(plan.bottom[gauge.reach]);
      rows.push_back({gauge.gauge_id, gauge.reach_id, at.x, at.y, gauge.snap_distance_m, summary.gauge_scores[g],
                      &gauge.observed, &summary.gauge_outflow[g]});
    }
    return rows;
  }

  report::ReportInputs inputs(bool us = false) const {
    report::ReportInputs in{summary.network->table, plan, summary.results, summary.info, gpkg.string(), us};
    in.gauges = gaugeRows();
    return in;
  }
};

const GaugeRun& gaugeRun() {
  static const GaugeRun run;
  return run;
}

struct GpkgGauge {
  std::string id, reach;
  long n_obs = 0;
  double nse = NAN, kge = NAN, r = NAN, alpha = NAN, beta = NAN, pbias = NAN, peak_error = NAN, timing = NAN;
};

std::vector<GpkgGauge> gpkgGauges(const fs::path& gpkg) {
  std::vector<GpkgGauge> out;
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  EXPECT_TRUE(ds);
  if (!ds) return out;
  OGRLayer* layer = ds->GetLayerByName("gauges");
  EXPECT_NE(layer, nullptr);
  if (!layer) return out;
  for (auto& f : *layer) {
    GpkgGauge g;
    g.id = f->GetFieldAsString("gauge_id");
    g.reach = f->GetFieldAsString("reach_id");
    g.n_obs = f->GetFieldAsInteger("n_obs");
    g.nse = f->GetFieldAsDouble("nse");
    g.kge = f->GetFieldAsDouble("kge");
    g.r = f->GetFieldAsDouble("kge_r");
    g.alpha = f->GetFieldAsDouble("kge_alpha");
    g.beta = f->GetFieldAsDouble("kge_beta");
    g.pbias = f->GetFieldAsDouble("pbias_pct");
    g.peak_error = f->GetFieldAsDouble("peak_error_pct");
    g.timing = f->GetFieldAsDouble("peak_timing_h");
    out.push_back(g);
  }
  return out;
}

/// Every `fill:rgb(r%,g%,b%)` of an SVG (cairo's SVG surface writes fills so).
std::vector<std::array<double, 3>> fills(const std::string& svg) {
  static const std::regex rgb(R"(fill:\s*rgb\(([0-9.]+)%,\s*([0-9.]+)%,\s*([0-9.]+)%\))");
  std::vector<std::array<double, 3>> out;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), rgb); it != std::sregex_iterator(); ++it)
    out.push_back({std::stod((*it)[1]) / 100, std::stod((*it)[2]) / 100, std::stod((*it)[3]) / 100});
  return out;
}

/// The gauge symbol's vermillion (Okabe & Ito: 213, 94, 0), within cairo's
/// rounding; no colour of the discharge ramp has a red this strong with no blue.
bool vermillion(const std::array<double, 3>& c) {
  return std::abs(c[0] - 0.835) < 0.01 && std::abs(c[1] - 0.369) < 0.01 && c[2] < 0.01;
}

/// NSE written out from its definition (Nash & Sutcliffe 1970) over the
/// samples where the observation is present.
double nashSutcliffe(const std::vector<double>& o, const std::vector<double>& s) {
  double sum = 0, n = 0;
  for (std::size_t k = 0; k < o.size(); ++k)
    if (!std::isnan(o[k])) sum += o[k], ++n;
  const double mean = sum / n;
  double err = 0, var = 0;
  for (std::size_t k = 0; k < o.size(); ++k) {
    if (std::isnan(o[k])) continue;
    err += (s[k] - o[k]) * (s[k] - o[k]);
    var += (o[k] - mean) * (o[k] - mean);
  }
  return 1 - err / var;
}

double maxPresent(const std::vector<double>& v, const std::vector<double>& mask) {
  double m = -INFINITY;
  for (std::size_t k = 0; k < v.size(); ++k)
    if (!std::isnan(mask[k])) m = std::max(m, v[k]);
  return m;
}

class ReportGaugesTest : public ::testing::Test {
protected:
  void SetUp() override { GDALAllRegister(); }
  testsupport::TempDir tmp;
  fs::path report() const { return tmp.path() / "report"; }
  std::string write(const report::ReportInputs& in) {
    report::writeReport(report(), in, *gaugeRun().series, false);
    return readText(report() / "index.html");
  }
};

TEST_F(ReportGaugesTest, RunWritesTheGaugeTableMatchingTheLayerAndTheDefinitions) {
  const GaugeRun& run = gaugeRun();
  // The report written by the run itself (Outputs::commit hands it the gauges).
  const std::string html = readText(run.report_dir / "index.html");
  const auto rows = tableRows(html, "gauges");
  ASSERT_EQ(rows.size(), 2u);
  const auto layer = gpkgGauges(run.gpkg);
  ASSERT_EQ(layer.size(), 2u);
  // Worst KGE first: R1 (c = 0.5: KGE = 1 − √2 ≈ −0.41) before R13 (c = 1.25: KGE ≈ 0.72).
  EXPECT_EQ(trim(rows[0][0]), "R1");
  EXPECT_EQ(trim(rows[1][0]), "R13");
  for (const auto& row : rows) {
    ASSERT_EQ(row.size(), 13u);
    const std::string id = trim(row[0]);
    const auto g = std::find_if(layer.begin(), layer.end(), [&](const GpkgGauge& x) { return x.id == id; });
    ASSERT_NE(g, layer.end()) << id;
    // Without a gauge layer each series is a gauge on the reach it names (docs/formats.md).
    EXPECT_EQ(trim(row[1]), g->reach);
    EXPECT_EQ(trim(row[1]), id);
    EXPECT_EQ(trim(row[2]), std::to_string(g->n_obs));
    EXPECT_EQ(trim(row[5]), fmt::format("{:.3f}", g->nse)) << id;
    EXPECT_EQ(trim(row[6]), fmt::format("{:.3f}", g->kge)) << id;
    EXPECT_EQ(trim(row[7]), fmt::format("{:.3f}", g->r)) << id;
    EXPECT_EQ(trim(row[8]), fmt::format("{:.3f}", g->alpha)) << id;
    EXPECT_EQ(trim(row[9]), fmt::format("{:.3f}", g->beta)) << id;
    EXPECT_EQ(trim(row[10]), fmt::format("{:.1f}", g->pbias)) << id;
    EXPECT_EQ(trim(row[11]), fmt::format("{:.1f}", g->peak_error)) << id;
    EXPECT_EQ(trim(row[12]), fmt::format("{:.2f}", g->timing)) << id;

    // The analytic values for o = c·s (see the top of this file). The
    // observations were written exactly (shortest round-trip), so only
    // the cell's rounding separates them: half a unit of the last digit.
    const double c = kScale.at(id), inv = 1 / c;
    const auto& o = run.observed.at(id);
    const auto& s = run.simulated.at(id);
    std::size_t present = 0;
    for (const double v : o) present += !std::isnan(v);
    EXPECT_EQ(std::stoul(trim(row[2])), present) << id;
    EXPECT_NEAR(std::stod(row[7]), 1.0, 0.0005) << id;
    EXPECT_NEAR(std::stod(row[8]), inv, 0.0005) << id;
    EXPECT_NEAR(std::stod(row[9]), inv, 0.0005) << id;
    EXPECT_NEAR(std::stod(row[6]), 1 - std::sqrt(2.0) * std::abs(inv - 1), 0.0005) << id;
    EXPECT_NEAR(std::stod(row[5]), nashSutcliffe(o, s), 0.0005) << id;
    EXPECT_NEAR(std::stod(row[10]), 100 * (inv - 1), 0.05) << id;
    EXPECT_NEAR(std::stod(row[11]), 100 * (inv - 1), 0.05) << id;
    EXPECT_NEAR(std::stod(row[12]), 0.0, 0.005) << id;
    // The peaks over the compared samples, m³/s (2 decimals).
    EXPECT_NEAR(std::stod(row[3]), maxPresent(o, o), 0.005) << id;
    EXPECT_NEAR(std::stod(row[4]), maxPresent(s, o), 0.005) << id;
  }
  // One panel per gauge, worst KGE first; the scores' meaning and sources.
  EXPECT_TRUE(fs::exists(run.report_dir / "gauge-1.svg"));
  EXPECT_TRUE(fs::exists(run.report_dir / "gauge-2.svg"));
  EXPECT_FALSE(fs::exists(run.report_dir / "gauge-3.svg"));
  EXPECT_NE(html.find("alt=\"Observed and simulated discharge at Gauge R1\""), std::string::npos);
  EXPECT_LT(html.find("src=\"gauge-1.svg\" alt=\"Observed and simulated discharge at Gauge R1\""),
            html.find("src=\"gauge-2.svg\" alt=\"Observed and simulated discharge at Gauge R13\""));
  EXPECT_NE(html.find("Nash &amp; Sutcliffe 1970"), std::string::npos);
  EXPECT_NE(html.find("Gupta et al. 2009"), std::string::npos);
  EXPECT_NE(html.find("2 gauges"), std::string::npos);
  EXPECT_NE(html.find(io::kResultsCaution), std::string::npos);
  // Key number: the median of the two KGEs, as the layer gives them.
  const double median = (layer[0].kge + layer[1].kge) / 2;
  EXPECT_NE(html.find("<div class=\"k\">median KGE at the gauges</div><div class=\"v\">" +
                      fmt::format("{:.2f}", median) + "</div>"),
            std::string::npos)
      << html;
}

TEST_F(ReportGaugesTest, MapShowsGaugesAndNoneWithoutThem) {
  const std::string html = write(gaugeRun().inputs());
  EXPECT_NE(html.find("gauges as triangles"), std::string::npos);
  const auto with = fills(readText(report() / "map.svg"));
  // Two gauges and the legend's symbol.
  EXPECT_GE(std::count_if(with.begin(), with.end(), vermillion), 3);

  report::ReportInputs none = gaugeRun().inputs();
  none.gauges.clear();
  const fs::path other = tmp.path() / "no-gauges";
  report::writeReport(other, none, *gaugeRun().series, false);
  const auto without = fills(readText(other / "map.svg"));
  EXPECT_EQ(std::count_if(without.begin(), without.end(), vermillion), 0);
  const std::string plain = readText(other / "index.html");
  EXPECT_EQ(plain.find("<table id=\"gauges\""), std::string::npos);
  EXPECT_EQ(plain.find("KGE"), std::string::npos);
  for (const auto& e : fs::directory_iterator(other))
    EXPECT_NE(e.path().filename().string().rfind("gauge-", 0), 0u) << e.path();
}

TEST_F(ReportGaugesTest, UsCustomaryUnitsConvertTheGaugePeaks) {
  const GaugeRun& run = gaugeRun();
  const std::string html = write(run.inputs(true));
  const auto rows = tableRows(html, "gauges");
  ASSERT_EQ(rows.size(), 2u);
  // 1 ft = 0.3048 m exactly (international foot, 1959).
  const double cfs = 0.3048 * 0.3048 * 0.3048;
  for (const auto& row : rows) {
    ASSERT_EQ(row.size(), 13u);
    const std::string id = trim(row[0]);
    const auto& o = run.observed.at(id);
    const auto& s = run.simulated.at(id);
    EXPECT_NEAR(std::stod(row[3]), maxPresent(o, o) / cfs, 0.005) << id;
    EXPECT_NEAR(std::stod(row[4]), maxPresent(s, o) / cfs, 0.005) << id;
    // Dimensionless scores do not change with the units (c = 0.5 or 1.25).
    EXPECT_NEAR(std::stod(row[8]), 1 / kScale.at(id), 0.0005) << id;
  }
  EXPECT_NE(html.find("observed peak (cfs)"), std::string::npos);
  EXPECT_EQ(html.find("observed peak (m³/s)"), std::string::npos);
}

// Twenty gauges made up in the test on the sample network's reaches: the
// table lists every one, worst KGE first (one whose KGE cannot be formed
// last), and panels go to the twelve worst.
TEST_F(ReportGaugesTest, ManyGaugesAreRankedByKge) {
  const GaugeRun& run = gaugeRun();
  const std::size_t n = 20;
  const auto& s = run.simulated.at("R1");
  std::vector<std::vector<double>> obs(n);
  report::ReportInputs in = run.inputs();
  in.gauges.clear();
  for (std::size_t k = 0; k < n; ++k) {
    io::GaugeOutput g;
    g.gauge_id = fmt::format("G{:02d}", k);
    g.reach_id = run.plan.reach_id[k];
    g.x = run.plan.bottom[k].x;
    g.y = run.plan.bottom[k].y;
    // All different; G05's cannot be formed (NaN).
    g.skill.kge = k == 5 ? NAN : 0.9 - 0.07 * static_cast<double>((k * 7) % n);
    g.skill.n_obs = s.size();
    obs[k] = s;
    g.observed = &obs[k];
    g.simulated = &s;
    in.gauges.push_back(g);
  }
  const std::string html = write(in);
  const auto rows = tableRows(html, "gauges");
  ASSERT_EQ(rows.size(), n);
  std::vector<std::pair<double, std::string>> expected;
  for (const auto& g : in.gauges) expected.emplace_back(std::isnan(g.skill.kge) ? INFINITY : g.skill.kge, g.gauge_id);
  std::sort(expected.begin(), expected.end());
  ASSERT_EQ(expected.back().second, "G05");
  for (std::size_t k = 0; k < n; ++k) EXPECT_EQ(trim(rows[k][0]), expected[k].second) << "row " << k + 1;
  EXPECT_EQ(trim(rows[n - 1][6]), "-");  // a score that cannot be formed is shown as "-"
  // The key number is the median of the 19 KGEs that can be formed: the 10th smallest.
  EXPECT_NE(html.find("<div class=\"k\">median KGE at the gauges</div><div class=\"v\">" +
                      fmt::format("{:.2f}", expected[9].first) + "</div>"),
            std::string::npos);
  std::size_t panels = 0;
  for (const auto& e : fs::directory_iterator(report()))
    panels += e.path().filename().string().rfind("gauge-", 0) == 0;
  EXPECT_EQ(panels, 12u);
  EXPECT_NE(html.find("alt=\"Observed and simulated discharge at Gauge " + expected[11].second + "\""),
            std::string::npos);
  EXPECT_EQ(html.find("alt=\"Observed and simulated discharge at Gauge " + expected[12].second + "\""),
            std::string::npos);
}

}  // namespace
