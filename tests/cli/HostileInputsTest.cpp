// Legal but extreme inputs on the command line and in files: each fails
// early, with exit 1 (bad input) or 2 (usage), naming what is wrong and
// where; none is an internal error (exit 3), a crash or a library warning.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using testsupport::CliRun;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kNetwork = kSample + "network.gpkg";
const std::string kStorm = " --inflow " + kSample + "inflow.csv --lateral " + kSample + "lateral.csv";

CliRun run(const std::string& args) { return testsupport::runReachwise(args); }

void writeText(const fs::path& p, const std::string& text) { std::ofstream(p) << text; }

bool has(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

/// Data rows of a CSV file (lines after the header).
std::size_t dataRows(const fs::path& p) {
  std::ifstream in(p);
  std::string line;
  std::size_t n = 0;
  while (std::getline(in, line))
    if (!line.empty()) ++n;
  return n - 1;
}

TEST(HostileInputs, TimeStepsThatAreNoStepAreUsageErrors) {
  const testsupport::TempDir tmp;
  // nan passed CLI11's PositiveNumber check; 1e-15 asked for a vector too
  // large (exit 3); 1e-16 was undefined behaviour (a double beyond size_t
  // converted to it).
  for (const char* dt : {"nan", "inf", "0", "-60", "1e-15", "1e-16", "0.0009"}) {
    const CliRun r = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --dt " + dt);
    EXPECT_EQ(r.code, 2) << dt << "\n" << r.err;
    EXPECT_TRUE(has(r.err, "--dt")) << dt << "\n" << r.err;
    EXPECT_FALSE(has(r.err, "internal error")) << r.err;
    EXPECT_FALSE(fs::exists(tmp.file("o.gpkg")));
  }
}

TEST(HostileInputs, RunFileTimeStepMustBeFinite) {
  const testsupport::TempDir tmp;
  for (const char* dt : {"inf", "nan", "1e-16"}) {
    const fs::path config = tmp.path() / "run.toml";
    writeText(config, std::string("[route]\ndt = ") + dt + "\n");
    const CliRun r = run("route " + kNetwork + kStorm + " --config " + config.string() + " --out " +
                         tmp.file("o.gpkg"));
    EXPECT_EQ(r.code, 1) << dt << "\n" << r.err;
    EXPECT_TRUE(has(r.err, config.string())) << r.err;
    EXPECT_TRUE(has(r.err, "route.dt")) << r.err;
  }
}

TEST(HostileInputs, AxisLongerThanAllowedIsRefusedSayingHowToAllowIt) {
  const testsupport::TempDir tmp;
  // Two hourly rows in 2026 and two 140 years later: 1,227,218 hourly steps
  // from 2026-05-01T00:00Z to 2166-05-01T01:00Z (51,134 days × 24 + 2; the
  // day count by the Gregorian rule: 140 × 365 days and 34 leap days,
  // 2028-2164 less 2100; checked with Python's datetime).
  writeText(tmp.path() / "in.csv", "time,R12\n2026-05-01T00:00:00Z,1\n2026-05-01T01:00:00Z,1\n");
  writeText(tmp.path() / "lat.csv", "time,R1\n2166-05-01T00:00:00Z,1\n2166-05-01T01:00:00Z,1\n");
  const CliRun r = run("route " + kNetwork + " --inflow " + tmp.file("in.csv") + " --lateral " +
                       tmp.file("lat.csv") + " --out " + tmp.file("o.gpkg"));
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_TRUE(has(r.err, "1227218 time steps")) << r.err;
  EXPECT_TRUE(has(r.err, "--max-steps 1227218")) << r.err;
  EXPECT_TRUE(has(r.err, tmp.file("in.csv"))) << r.err;
  EXPECT_TRUE(has(r.err, tmp.file("lat.csv"))) << r.err;
  EXPECT_FALSE(fs::exists(tmp.file("o.gpkg")));
}

TEST(HostileInputs, MaxStepsCanBeLoweredAndRaised) {
  const testsupport::TempDir tmp;
  // The sample storm has one row per step.
  const std::size_t steps = dataRows(kSample + "inflow.csv");
  const CliRun refused = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --max-steps " +
                             std::to_string(steps - 1));
  EXPECT_EQ(refused.code, 1) << refused.err;
  EXPECT_TRUE(has(refused.err, "--max-steps " + std::to_string(steps))) << refused.err;
  const CliRun allowed = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet --max-steps " +
                             std::to_string(steps));
  EXPECT_EQ(allowed.code, 0) << allowed.err;
  // The run file's key does the same.
  writeText(tmp.path() / "run.toml", "[route]\nmax_steps = " + std::to_string(steps - 1) + "\n");
  const CliRun from_file = run("route " + kNetwork + kStorm + " --out " + tmp.file("p.gpkg") + " --config " +
                               tmp.file("run.toml"));
  EXPECT_EQ(from_file.code, 1) << from_file.err;
  EXPECT_TRUE(has(from_file.err, "--max-steps " + std::to_string(steps))) << from_file.err;
}

TEST(HostileInputs, HydrographRowsAboveTheLimitAreRefusedBeforeRouting) {
  const testsupport::TempDir tmp;
  const CliRun r = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --max-hydrograph-rows 1000");
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_TRUE(has(r.err, "--max-hydrograph-rows")) << r.err;
  EXPECT_TRUE(has(r.err, "hydrographs")) << r.err;
  EXPECT_FALSE(fs::exists(tmp.file("o.gpkg")));
  // One reach's hydrograph fits.
  const CliRun one = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") +
                         " --quiet --hydrographs R12 --max-hydrograph-rows 1000");
  EXPECT_EQ(one.code, 0) << one.err;
}

TEST(HostileInputs, HydrographIdsMayHaveBlanksAroundThem) {
  const testsupport::TempDir tmp;
  const CliRun r = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet --csv " +
                       tmp.file("csv") + " --hydrographs 'R1, R12'");
  EXPECT_EQ(r.code, 0) << r.err;
  const std::string rows = testsupport::slurp(tmp.path() / "csv" / "hydrographs.csv");
  EXPECT_TRUE(has(rows, "\nR1,")) << rows.substr(0, 200);
  EXPECT_TRUE(has(rows, "\nR12,")) << rows.substr(0, 200);
  EXPECT_FALSE(has(rows, "\nR2,"));
}

TEST(HostileInputs, ThreadsBeyondTheBoundAreAUsageErrorWithoutLibraryWarning) {
  const testsupport::TempDir tmp;
  const CliRun r = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --threads 100000");
  EXPECT_EQ(r.code, 2) << r.err;
  EXPECT_TRUE(has(r.err, "--threads")) << r.err;
  EXPECT_FALSE(has(r.err, "TBB")) << r.err;
  const CliRun most = run("route " + kNetwork + kStorm + " --out " + tmp.file("o.gpkg") + " --quiet --threads 4096");
  EXPECT_EQ(most.code, 0) << most.err;
  EXPECT_EQ(most.err, "") << "no library warning at the bound";
}

TEST(HostileInputs, HugeDischargeIsRefusedAtTheForcingFileLine) {
  const testsupport::TempDir tmp;
  // Line 3 of a wide file: the second data row.
  writeText(tmp.path() / "in.csv",
            "time,R12\n2026-05-01T00:00:00Z,1\n2026-05-01T01:00:00Z,1e308\n2026-05-01T02:00:00Z,1\n");
  const CliRun r = run("route " + kNetwork + " --inflow " + tmp.file("in.csv") + " --out " + tmp.file("o.gpkg"));
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_TRUE(has(r.err, tmp.file("in.csv"))) << r.err;
  EXPECT_TRUE(has(r.err, "line 3")) << r.err;
  EXPECT_TRUE(has(r.err, "above the largest")) << r.err;
  EXPECT_FALSE(has(r.err, "celerity")) << r.err;
}

TEST(HostileInputs, DischargeFarBeyondTheChannelIsBadInputNamingTheReach) {
  const testsupport::TempDir tmp;
  // The sample storm with 1e6 m3/s (below the reader's limit of 1e8) for
  // two hours at the top of R41 (the last column): the flat reaches below,
  // which vpmc hands to the diffusion wave, take flows no channel of the
  // network carries; the run fails as bad input naming the reach, not as
  // an internal error (exit 3).
  {
    std::ifstream in(kSample + "inflow.csv");
    std::ofstream out(tmp.path() / "in.csv");
    std::size_t line = 0;
    for (std::string row; std::getline(in, row); ++line) {
      if (line >= 20 && line < 24) row = row.substr(0, row.rfind(',')) + ",1e6";
      out << row << '\n';
    }
  }
  const CliRun r = run("route " + kNetwork + " --inflow " + tmp.file("in.csv") + " --out " + tmp.file("o.gpkg"));
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_TRUE(has(r.err, "reach R")) << r.err;
  EXPECT_TRUE(has(r.err, "did not converge")) << r.err;
  EXPECT_TRUE(has(r.err, "check the forcing's values and units")) << r.err;
  EXPECT_FALSE(fs::exists(tmp.path() / "o.gpkg"));
}

TEST(HostileInputs, SubnormalDischargeIsNoFlowNotAnError) {
  const testsupport::TempDir tmp;
  // 4.9e-324, the smallest positive double (subnormal), is read as 0.
  writeText(tmp.path() / "in.csv",
            "time,R12\n2026-05-01T00:00:00Z,4.9e-324\n2026-05-01T01:00:00Z,4.9e-324\n2026-05-01T02:00:00Z,0\n");
  const CliRun r = run("route " + kNetwork + " --inflow " + tmp.file("in.csv") + " --quiet --out " + tmp.file("o.gpkg"));
  EXPECT_EQ(r.code, 0) << r.err;
  EXPECT_FALSE(has(r.err, "q_min")) << r.err;
}

TEST(HostileInputs, InfiniteDefaultInTheRunFileIsRefusedByCheckAndRoute) {
  const testsupport::TempDir tmp;
  const fs::path config = tmp.path() / "run.toml";
  writeText(config, "[network.fields]\nmanning_n = { name = \"manning_n\", default = inf }\n");
  const CliRun check = run("check " + kNetwork + " --config " + config.string());
  EXPECT_EQ(check.code, 1) << check.out << check.err;
  EXPECT_TRUE(has(check.err, "network.fields.manning_n.default")) << check.err;
  EXPECT_TRUE(has(check.err, config.string())) << check.err;
  const CliRun route = run("route " + kNetwork + kStorm + " --config " + config.string() + " --out " +
                           tmp.file("o.gpkg"));
  EXPECT_EQ(route.code, 1) << route.err;
  EXPECT_TRUE(has(route.err, "network.fields.manning_n.default")) << route.err;
}

}  // namespace
