// `reachwise calibrate`, end to end on the sample network: the written
// network carries Manning's n times each sub-basin's multiplier, routing it
// reproduces the scores the calibration reports, and an existing output is
// refused before any routing. (Recovery of known multipliers: the twin
// experiment in tests/run/CalibrateTest.cpp.)
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <fstream>
#include <map>
#include <memory>
#include <sstream>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Observed.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kForcing = " --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv";

GDALDatasetUniquePtr open(const fs::path& p) {
  reachwise::io::ensureGdal();
  return GDALDatasetUniquePtr(GDALDataset::Open(p.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
}

std::map<std::string, double> fieldById(GDALDataset& ds, const char* layer, const char* id, const char* field) {
  std::map<std::string, double> out;
  OGRLayer* l = ds.GetLayerByName(layer);
  if (!l) return out;
  for (auto& f : *l) out[f->GetFieldAsString(id)] = f->GetFieldAsDouble(field);
  return out;
}

}  // namespace

TEST(CalibrateCommand, WritesARoutableCalibratedNetwork) {
  testsupport::TempDir dir;
  // Observations: the run's own outflow at R13 and R1, times 1.15 at R13.
  const auto first = testsupport::routeSampleHydrographs(dir.path(), "R13,R1");
  ASSERT_EQ(first.code, 0) << first.err;
  testsupport::writeObserved(dir.path() / "csv" / "hydrographs.csv", dir.path() / "obs.csv",
                             [](const std::string& id) { return id == "R13" ? 1.15 : 1.0; });
  const fs::path cal = dir.path() / "cal.gpkg";
  // A spread budget of its own, which the run file must carry for the
  // scores below to come back.
  const std::string args = "calibrate " + kSample + "network.gpkg" + kForcing + " --observed " +
                           (dir.path() / "obs.csv").string() + " --out " + cal.string() +
                           " --max-evaluations 30 --spread-budget 0.01";
  const auto run = testsupport::runReachwise(args);
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_NE(run.out.find("gauge R13 on R13"), std::string::npos) << run.out;
  EXPECT_NE(run.out.find("caution:"), std::string::npos);

  auto out = open(cal);
  ASSERT_TRUE(out);
  const auto multiplier = fieldById(*out, "calibration", "gauge_id", "multiplier");
  const auto kge_after = fieldById(*out, "calibration", "gauge_id", "kge_after");
  ASSERT_EQ(multiplier.size(), 2u);
  // n of every reach = original n × its sub-basin's multiplier; R13's
  // sub-basin is the reaches whose n changed by R13's multiplier.
  const auto n_before = fieldById(*open(kSample + "network.gpkg"), "reaches", "reach_id", "manning_n");
  const auto n_after = fieldById(*out, "reaches", "reach_id", "manning_n");
  ASSERT_EQ(n_before.size(), n_after.size());
  std::size_t in_r13 = 0;
  for (const auto& [id, n] : n_before) {
    const double m = n_after.at(id) / n;
    const bool up = std::abs(m - multiplier.at("R13")) < 1e-9, down = std::abs(m - multiplier.at("R1")) < 1e-9;
    EXPECT_TRUE(up || down) << id << " multiplied by " << m;
    in_r13 += up;
  }
  EXPECT_GE(in_r13, 1u);

  // Routing the written network with the written run file (it names the
  // forcing, method and spread budget) gives the scores the calibration
  // reported.
  const fs::path run_file = dir.path() / "cal.toml";
  ASSERT_TRUE(fs::exists(run_file));
  EXPECT_NE(run.out.find("--config " + run_file.string()), std::string::npos) << run.out;
  const fs::path again = dir.path() / "again.gpkg";
  const auto routed = testsupport::runReachwise("route " + cal.string() + " --config " + run_file.string() +
                                                " --out " + again.string() + " --observed " +
                                                (dir.path() / "obs.csv").string() + " --quiet");
  ASSERT_EQ(routed.code, 0) << routed.err;
  const auto kge_routed = fieldById(*open(again), "gauges", "gauge_id", "kge");
  for (const auto& [id, kge] : kge_after) EXPECT_NEAR(kge_routed.at(id), kge, 1e-9) << id;

  // An existing output is refused at once (nothing routed), and left alone.
  const auto size = fs::file_size(cal);
  const auto refused = testsupport::runReachwise(args);
  EXPECT_NE(refused.code, 0);
  EXPECT_NE(refused.err.find(cal.string()), std::string::npos) << refused.err;
  EXPECT_EQ(refused.out.find("calibrating"), std::string::npos) << refused.out;
  EXPECT_EQ(fs::file_size(cal), size);
}

TEST(CalibrateCommand, TakesItsSettingsFromTheRunFileAndFlagsWin) {
  testsupport::TempDir dir;
  const auto first = testsupport::routeSampleHydrographs(dir.path(), "R13");
  ASSERT_EQ(first.code, 0) << first.err;
  testsupport::writeObserved(dir.path() / "csv" / "hydrographs.csv", dir.path() / "obs.csv",
                             [](const std::string&) { return 1.1; });
  const fs::path toml = dir.path() / "run.toml";
  std::ofstream(toml) << "[calibrate]\nparameter = \"width\"\nobjective = \"nse\"\nlower = 0.8\nupper = 1.25\n"
                         "max_evaluations = 8\nmin_observations = 5\n";
  const fs::path cal = dir.path() / "cal.gpkg";
  const std::string base = "calibrate " + kSample + "network.gpkg" + kForcing + " --observed " +
                           (dir.path() / "obs.csv").string() + " --config " + toml.string();
  // --upper on the command line wins over the file's 1.25.
  const auto run = testsupport::runReachwise(base + " --out " + cal.string() + " --upper 1.5");
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_NE(run.out.find("the bottom width"), std::string::npos) << run.out;
  EXPECT_NE(run.out.find("(width in [0.8, 1.5], objective nse, at most 8 routings each)"), std::string::npos)
      << run.out;
  auto out = open(cal);
  ASSERT_TRUE(out);
  OGRLayer* table = out->GetLayerByName("calibration");
  ASSERT_NE(table, nullptr);
  ASSERT_EQ(table->GetFeatureCount(), 1);
  std::unique_ptr<OGRFeature> f(table->GetNextFeature());
  EXPECT_STREQ(f->GetFieldAsString("parameter"), "width");
  EXPECT_STREQ(f->GetFieldAsString("objective"), "nse");
  EXPECT_EQ(f->GetFieldAsDouble("lower"), 0.8);
  EXPECT_EQ(f->GetFieldAsDouble("upper"), 1.5);
  // The file's budget of 8 routings was used (the default is 60); the count
  // also holds the last routing at the result, made after the search
  // (src/run/Calibrate.cpp), hence 8 + 1.
  EXPECT_LE(f->GetFieldAsInteger64("evaluations"), 8 + 1);

  // A file's lower bound above the upper one (the default 2 here) is refused
  // before anything is routed, naming the file and the key.
  std::ofstream(toml) << "[calibrate]\nlower = 3\n";
  const fs::path bad = dir.path() / "bad.gpkg";
  const auto refused = testsupport::runReachwise(base + " --out " + bad.string());
  EXPECT_NE(refused.code, 0);
  EXPECT_NE(refused.err.find("calibrate.lower"), std::string::npos) << refused.err;
  EXPECT_NE(refused.err.find(toml.string()), std::string::npos) << refused.err;
  EXPECT_EQ(refused.out.find("calibrating"), std::string::npos) << refused.out;
  EXPECT_FALSE(fs::exists(bad));
  // An unknown key likewise.
  std::ofstream(toml) << "[calibrate]\nmethod = \"nelder-mead\"\n";
  const auto unknown = testsupport::runReachwise(base + " --out " + bad.string());
  EXPECT_NE(unknown.code, 0);
  EXPECT_NE(unknown.err.find("calibrate.method"), std::string::npos) << unknown.err;
  EXPECT_FALSE(fs::exists(bad));
}

// The demo scenario's gauge records were invented on a river whose n is
// 30 % above the layer's, with ±4 % scatter (sample-network/make_observed.sh):
// calibrating against them never lowers the skill (the search starts from
// multiplier 1), and raises n in the largest sub-basin (G3-upper, 26
// reaches; the 5 reaches below the dam hardly change the dam-controlled
// outflow, so their n is not identifiable from these records).
TEST(CalibrateCommand, TheDemoRecordsCallForRougherChannels) {
  testsupport::TempDir dir;
  const fs::path cal = dir.path() / "cal.gpkg";
  const auto run = testsupport::runReachwise(
      "calibrate " + kSample + "network.gpkg" + kForcing + " --lakes " + kSample + "lakes.gpkg --observed " + kSample +
      "observed.csv --gauges " + kSample + "gauges.gpkg --out " + cal.string());
  ASSERT_EQ(run.code, 0) << run.err;
  auto out = open(cal);
  ASSERT_TRUE(out);
  const auto multiplier = fieldById(*out, "calibration", "gauge_id", "multiplier");
  const auto before = fieldById(*out, "calibration", "gauge_id", "kge_before");
  const auto after = fieldById(*out, "calibration", "gauge_id", "kge_after");
  ASSERT_EQ(multiplier.size(), 3u);
  for (const auto& [id, m] : multiplier) EXPECT_GE(after.at(id), before.at(id) - 1e-12) << id;
  EXPECT_GT(multiplier.at("G3-upper"), 1.1);
  EXPECT_LT(multiplier.at("G3-upper"), 1.5);
  EXPECT_GT(after.at("G3-upper"), before.at("G3-upper"));
}

// The report of the calibrated run compares every gauge before and after.
// Checked against two separate `route` runs: the original network (before)
// and the calibrated network with its run file (after), whose `gauges`
// layers give the KGE the report's table must show (3 decimals, as shown).
TEST(CalibrateCommand, ReportComparesTheGaugesBeforeAndAfter) {
  testsupport::TempDir dir;
  const fs::path cal = dir.path() / "cal.gpkg", rep = dir.path() / "rep";
  const std::string gauges = " --lakes " + kSample + "lakes.gpkg --observed " + kSample + "observed.csv --gauges " +
                             kSample + "gauges.gpkg";
  const auto run = testsupport::runReachwise("calibrate " + kSample + "network.gpkg" + kForcing + gauges +
                                             " --max-evaluations 12 --out " + cal.string() + " --report " +
                                             rep.string());
  ASSERT_EQ(run.code, 0) << run.err;
  const fs::path before_gpkg = dir.path() / "before.gpkg", after_gpkg = dir.path() / "after.gpkg";
  ASSERT_EQ(testsupport::runReachwise("route " + kSample + "network.gpkg" + kForcing + gauges + " --out " +
                                      before_gpkg.string()).code, 0);
  ASSERT_EQ(testsupport::runReachwise("route " + cal.string() + " --config " + (dir.path() / "cal.toml").string() +
                                      " --observed " + kSample + "observed.csv --gauges " + kSample +
                                      "gauges.gpkg --out " + after_gpkg.string()).code, 0);
  auto b = open(before_gpkg), a = open(after_gpkg);
  ASSERT_TRUE(b && a);
  const auto kge_before = fieldById(*b, "gauges", "gauge_id", "kge");
  const auto kge_after = fieldById(*a, "gauges", "gauge_id", "kge");
  ASSERT_EQ(kge_before.size(), 3u);

  std::ifstream in(rep / "index.html");
  ASSERT_TRUE(in) << "no report";
  std::stringstream html;
  html << in.rdbuf();
  const std::string page = html.str();
  const auto table = page.find("<table id=\"calibration-gauges\">");
  ASSERT_NE(table, std::string::npos);
  ASSERT_NE(page.find("<table id=\"calibration\">"), std::string::npos);
  for (const auto& [id, kb] : kge_before) {
    const std::string row = "<tr><td>" + id + "</td><td class=\"num\">" + fmt::format("{:.3f}", kb) +
                            "</td><td class=\"num\">" + fmt::format("{:.3f}", kge_after.at(id)) + "</td>";
    EXPECT_NE(page.find(row, table), std::string::npos) << row;
  }
  // Refused before any routing when the report folder exists.
  const auto again = testsupport::runReachwise("calibrate " + kSample + "network.gpkg" + kForcing + gauges +
                                               " --out " + (dir.path() / "other.gpkg").string() + " --report " +
                                               rep.string());
  EXPECT_NE(again.code, 0);
  EXPECT_NE(again.err.find(rep.string()), std::string::npos) << again.err;
  EXPECT_FALSE(fs::exists(dir.path() / "other.gpkg"));
}
