// The `reachwise route` command line itself: flags, the run-file merge,
// exit codes and messages. What the run does with its options is tested
// in-process (tests/run/RouteTest.cpp).
#include <gtest/gtest.h>

#include <ogrsf_frmts.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Members.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kNetwork = kSample + "network.gpkg";
const std::string kStorm = " --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv";

using Outcome = testsupport::CliRun;

Outcome run(const std::string& args) { return testsupport::runReachwise(args); }

void writeText(const fs::path& p, const std::string& text) { std::ofstream(p) << text; }

std::unique_ptr<GDALDataset> open(const fs::path& p) {
  reachwise::io::ensureGdal();
  return std::unique_ptr<GDALDataset>(GDALDataset::Open(p.c_str(), GDAL_OF_VECTOR));
}

/// reach_id -> q series from the `hydrographs` table, in time order.
std::map<std::string, std::vector<double>> hydrographs(const fs::path& gpkg) {
  auto ds = open(gpkg);
  std::map<std::string, std::vector<double>> q;
  if (!ds) return q;
  OGRLayer* h = ds->ExecuteSQL("SELECT reach_id, q FROM hydrographs ORDER BY reach_id, time", nullptr, nullptr);
  for (auto& f : *h) q[f->GetFieldAsString(0)].push_back(f->GetFieldAsDouble(1));
  ds->ReleaseResultSet(h);
  return q;
}

}  // namespace

TEST(RouteOptions, QuietPrintsNothingAndForcingIsRequired) {
  const testsupport::TempDir tmp;
  const Outcome q = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet");
  EXPECT_EQ(q.code, 0);
  EXPECT_EQ(q.out, "");
  EXPECT_EQ(q.err, "");
  const Outcome loud = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --overwrite");
  EXPECT_NE(loud.out.find("cell updates/s"), std::string::npos) << loud.out;
  EXPECT_EQ(run("route " + kNetwork + " --out " + tmp.file("x.gpkg")).code, 2);  // usage: no forcing
}

TEST(RouteOptions, RunFileHoldsTheOptionsAndFlagsWin) {
  const testsupport::TempDir tmp;
  writeText(tmp.path() / "run.toml", "[route]\ninflow = \"" + kSample + "inflow.csv\"\nlateral = \"" + kSample +
                                         "lateral.csv\"\nout = \"from-file.gpkg\"\nhydrographs = \"outlets\"\n");
  const Outcome r = run("route " + kNetwork + " --config " + tmp.file("run.toml") + " --hydrographs R12");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto q = hydrographs(tmp.path() / "from-file.gpkg");  // out relative to the run file
  ASSERT_EQ(q.size(), 1u);
  EXPECT_EQ(q.begin()->first, "R12");  // the flag overrides the file
}

TEST(RouteOptions, ErrorsGiveExitCodesAndOneLinePerProblem) {
  const testsupport::TempDir tmp;
  // Unknown reach ids in --hydrographs: exit 1, all of them named, no output.
  const Outcome bad = run("route " + kNetwork + kStorm + " --out " + tmp.file("b.gpkg") + " --hydrographs R1,NOPE,ALSO");
  EXPECT_EQ(bad.code, 1);
  EXPECT_NE(bad.err.find("error: "), std::string::npos) << bad.err;
  EXPECT_NE(bad.err.find("NOPE, ALSO"), std::string::npos) << bad.err;
  EXPECT_FALSE(fs::exists(tmp.file("b.gpkg")));
  // An unknown method is a usage error.
  EXPECT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("m.gpkg") + " --method kinematic").code, 2);
  // So is a negative Ponce number for the diffusion hand-over.
  EXPECT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("d.gpkg") + " --diffusion-below -1").code, 2);
  EXPECT_FALSE(fs::exists(tmp.file("d.gpkg")));
  // And a spread budget outside [0, 0.1].
  for (const char* b : {"-0.001", "0.5"})
    EXPECT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("g.gpkg") + " --spread-budget " + b).code, 2) << b;
  EXPECT_FALSE(fs::exists(tmp.file("g.gpkg")));
  // A network with errors: each error on its own line, then the refusal.
  const Outcome cycle = run("route " + kSample + "cycle.gpkg" + kStorm + " --out " + tmp.file("c.gpkg"));
  EXPECT_EQ(cycle.code, 1);
  EXPECT_NE(cycle.err.find("error cycle "), std::string::npos) << cycle.err;
  EXPECT_NE(cycle.err.find("route refused"), std::string::npos) << cycle.err;
  EXPECT_FALSE(fs::exists(tmp.file("c.gpkg")));
  // An existing output is kept; the message says so.
  ASSERT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet").code, 0);
  const Outcome again = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg"));
  EXPECT_EQ(again.code, 1);
  EXPECT_NE(again.err.find("o.gpkg"), std::string::npos) << again.err;
  EXPECT_NE(again.err.find("overwriting"), std::string::npos) << again.err;
}


TEST(RouteOptions, TheTimeStepComesFromTheFlagOrTheRunFileOrTheForcing) {
  const testsupport::TempDir tmp;
  // "routed N reaches over S steps": S for each way of giving the step.
  const auto steps = [&](const std::string& args) {
    const Outcome r = run("route " + kNetwork + " --out " + tmp.file("o.gpkg") + " --overwrite" + args);
    EXPECT_EQ(r.code, 0) << r.err;
    const auto at = r.out.find(" steps of ");
    const auto from = r.out.rfind(' ', at - 1);
    return at == std::string::npos ? std::string() : r.out.substr(from + 1, at - from - 1);
  };
  const std::string own = steps(kStorm);  // the sample forcing is half-hourly
  ASSERT_FALSE(own.empty());
  // Halving the step over the same span: 2 (S - 1) + 1 samples.
  const std::string halved = std::to_string(2 * (std::stoul(own) - 1) + 1);
  EXPECT_EQ(steps(kStorm + " --dt 900"), halved);
  writeText(tmp.path() / "run.toml", "[route]\ndt = 900\n");
  EXPECT_EQ(steps(kStorm + " --config " + tmp.file("run.toml")), halved);
  EXPECT_EQ(steps(kStorm + " --config " + tmp.file("run.toml") + " --dt 1800"), own);  // the flag wins
  EXPECT_EQ(run("route " + kNetwork + kStorm + " --out " + tmp.file("z.gpkg") + " --dt 0").code, 2);
}

/// reach_id -> cells per step (sub-reaches x sub-steps) from `reaches`.
std::map<std::string, long long> cellsPerStep(const fs::path& gpkg) {
  std::map<std::string, long long> cells;
  auto ds = open(gpkg);
  EXPECT_TRUE(ds) << gpkg;
  OGRLayer* layer = ds ? ds->GetLayerByName("reaches") : nullptr;
  EXPECT_NE(layer, nullptr);
  if (!layer) return cells;
  for (auto& f : *layer)
    cells[f->GetFieldAsString("reach_id")] =
        static_cast<long long>(f->GetFieldAsInteger64("subreaches")) * f->GetFieldAsInteger64("substeps");
  return cells;
}

// --spread-budget reaches the router: 0 keeps the grid of the reference
// flow, a larger budget coarsens the sample network's quick reaches
// (docs/methods.md §4, "Coarser grids on quick reaches"): fewer cells per
// step (sub-reaches x sub-steps summed over `reaches`), never more on any
// reach. The run file's `spread_budget` does the same, and so does either
// for an ensemble (--members), whose members route as a single run does.
TEST(RouteOptions, SpreadBudgetCoarsensQuickReaches) {
  const testsupport::TempDir tmp;
  const auto cells = [&](const std::string& name, const std::string& args) {
    const fs::path out = tmp.file(name + ".gpkg");
    const Outcome r = run("route " + kNetwork + " --quiet --out " + out.string() + args);
    EXPECT_EQ(r.code, 0) << r.err;
    return cellsPerStep(out);
  };
  const auto fine = cells("b0", kStorm + " --spread-budget 0");
  const auto coarse = cells("b001", kStorm + " --spread-budget 0.01");
  ASSERT_EQ(fine.size(), coarse.size());
  long long total[2] = {0, 0};
  for (const auto& [id, c] : fine) {
    EXPECT_LE(coarse.at(id), c) << id;
    total[0] += c, total[1] += coarse.at(id);
  }
  EXPECT_LT(total[1], total[0]);

  writeText(tmp.path() / "run.toml", "[route]\nspread_budget = 0.01\n");
  EXPECT_EQ(cells("file", kStorm + " --config " + tmp.file("run.toml")), coarse);
  EXPECT_EQ(cells("flag_wins", kStorm + " --config " + tmp.file("run.toml") + " --spread-budget 0"), fine);

  testsupport::writeScaledMembers(tmp.path() / "members", {1.0, 1.0}, "f");
  const std::string members = " --members " + tmp.file("members") + " --lateral " + kSample + "lateral.csv";
  EXPECT_EQ(cells("members_fine", members + " --spread-budget 0"), fine);
  EXPECT_EQ(cells("members_coarse", members + " --spread-budget 0.01"), coarse);
}
