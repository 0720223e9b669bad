// `mpirun -n N reachwise route ...` against `reachwise route ...` alone:
// every table (CSV) and every series (NetCDF, values printed with 17
// significant digits, which round-trip a double exactly) must be the same.
// The reference is the program without ranks. Rows of the hydrograph
// tables come in the order the reaches finished, which depends on threads
// and ranks, so the tables are compared as sorted sets of rows; run_info
// differs by design in `ranks`, `command_line`, `series` (the output
// paths) and `peak_live_series` (the most series one rank held).
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "support/Cli.hpp"
#include "support/Errors.hpp"
#include "support/Members.hpp"
#include "support/Scratch.hpp"

using namespace testsupport;
namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kProgram = REACHWISE_BINARY_DIR "/reachwise";

std::vector<std::string> sortedLines(const fs::path& p, const std::set<std::string>& skip_keys = {}) {
  std::ifstream in(p);
  std::vector<std::string> lines;
  for (std::string line; std::getline(in, line);)
    if (!skip_keys.count(line.substr(0, line.find(',')))) lines.push_back(line);
  std::sort(lines.begin(), lines.end());
  return lines;
}

/// The NetCDF file's data as text, every double to 17 digits, without the
/// global attributes (the history carries the command line).
std::string seriesData(const fs::path& nc) {
  const CliRun dump = runShell("ncdump -p 9,17 " + shellQuoted(nc.string()) + " | sed '/global attributes/,/^data:/d'");
  EXPECT_EQ(dump.code, 0) << dump.err;
  return dump.out;
}

/// Routes with `args` alone (ranks 0) or under mpirun with `ranks`, into
/// `dir`: dir/out.gpkg, dir/csv/ and (with `series`) dir/series.nc.
CliRun routeInto(const fs::path& dir, const std::string& args, int ranks, bool series = true) {
  fs::create_directories(dir);
  std::string outputs = " --out " + shellQuoted((dir / "out.gpkg").string()) + " --csv " +
                        shellQuoted((dir / "csv").string()) + " --quiet";
  if (series) outputs += " --series " + shellQuoted((dir / "series.nc").string());
  const std::string program = kProgram + " route " + args + outputs;
  return runShell(ranks == 0 ? program : std::string(REACHWISE_MPIRUN) + " -n " + std::to_string(ranks) + " " + program);
}

void expectSameOutputs(const fs::path& alone, const fs::path& among, int ranks) {
  std::size_t tables = 0;
  for (const auto& entry : fs::directory_iterator(alone / "csv")) {
    const std::string name = entry.path().filename().string();
    const fs::path other = among / "csv" / name;
    ASSERT_TRUE(fs::exists(other)) << name;
    const std::set<std::string> skip =
        name == "run_info.csv" ? std::set<std::string>{"ranks", "command_line", "peak_live_series", "series"}
                               : std::set<std::string>{};
    EXPECT_EQ(sortedLines(entry.path(), skip), sortedLines(other, skip)) << name << " with " << ranks << " ranks";
    ++tables;
  }
  EXPECT_GE(tables, 4u);
  if (fs::exists(alone / "series.nc")) {
    EXPECT_EQ(seriesData(alone / "series.nc"), seriesData(among / "series.nc")) << ranks << " ranks";
  }
  const std::vector<std::string> info = sortedLines(among / "csv" / "run_info.csv");
  EXPECT_TRUE(std::count(info.begin(), info.end(), "ranks," + std::to_string(ranks)) == 1)
      << "run_info records the rank count";
}

/// Routes alone and on 1, 2 and 3 ranks into folders of `work`.
void expectAnyRankCountGivesTheSame(const fs::path& work, const std::string& args) {
  const CliRun one = routeInto(work / "alone", args, 0);
  ASSERT_EQ(one.code, 0) << one.err;
  for (const int ranks : {1, 2, 3}) {
    const fs::path dir = work / ("ranks" + std::to_string(ranks));
    const CliRun run = routeInto(dir, args, ranks);
    ASSERT_EQ(run.code, 0) << run.err;
    expectSameOutputs(work / "alone", dir, ranks);
  }
}

}  // namespace

TEST(MpiRoute, SampleNetworkWithLakeAndBifurcationsGivesTheSameOutputsOnAnyRankCount) {
  TempDir tmp;
  expectAnyRankCountGivesTheSame(tmp.path(), kSample + "network.gpkg --inflow " + kSample + "inflow.csv --lateral " + kSample +
                                 "lateral.csv --lakes " + kSample + "lakes.gpkg --hydrographs all");
}

TEST(MpiRoute, ATerminalLakeAtTheOutletGivesTheSameOutputsOnAnyRankCount) {
  // A lake around the sample network's outlet (the downstream end of R1,
  // at 512000, 5180000 in EPSG:32633): a terminal sink that takes the
  // outflow of whichever rank routed the outlet, routed on rank 0.
  TempDir tmp;
  std::ofstream(tmp.path() / "lake.csv")
      << "lake_id,k_h,WKT\nSINK,12,\"POLYGON((511900 5179900,512100 5179900,512100 5180100,511900 5180100,"
         "511900 5179900))\"\n";
  const std::string lakes = (tmp.path() / "lakes.gpkg").string();
  const CliRun made = runShell("ogr2ogr -f GPKG " + shellQuoted(lakes) + " " +
                               shellQuoted((tmp.path() / "lake.csv").string()) +
                               " -oo GEOM_POSSIBLE_NAMES=WKT -oo KEEP_GEOM_COLUMNS=NO -oo AUTODETECT_TYPE=YES "
                               "-a_srs EPSG:32633 -nln lakes -nlt POLYGON");
  ASSERT_EQ(made.code, 0) << made.err;
  expectAnyRankCountGivesTheSame(tmp.path(), kSample + "network.gpkg --inflow " + kSample + "inflow.csv --lateral " +
                                                 kSample + "lateral.csv --lakes " + shellQuoted(lakes));
  EXPECT_NE(slurp(tmp.path() / "alone/csv/lakes.csv").find("SINK,,"), std::string::npos)
      << "the lake is terminal (no reach below it)";
}

TEST(MpiRoute, SyntheticBasinsGiveTheSameOutputsOnAnyRankCount) {
  TempDir tmp;
  const std::string net = (tmp.path() / "net.gpkg").string(), inflow = (tmp.path() / "inflow.csv").string();
  const CliRun made = runShell(kProgram + " synth " + shellQuoted(net) + " --reaches 3000 --outlets 5 --lakes 4 --lateral " +
                               shellQuoted((tmp.path() / "lateral.nc").string()) + " --inflow " +
                               shellQuoted(inflow) + " --steps 48 --quiet");
  ASSERT_EQ(made.code, 0) << made.err;
  expectAnyRankCountGivesTheSame(tmp.path(), shellQuoted(net) + " --inflow " + shellQuoted(inflow) + " --lateral " +
                                 shellQuoted((tmp.path() / "lateral.nc").string()) + " --lakes " + shellQuoted(net) +
                                 " --hydrographs auto");
}

TEST(MpiRoute, AFailureFailsEveryRankWithOneMessageAndLeavesNoOutput) {
  TempDir tmp;
  // A discharge above the largest the reader takes, in R41's column.
  std::ifstream in(kSample + "inflow.csv");
  std::ofstream bad(tmp.path() / "bad.csv");
  std::size_t line = 0;
  for (std::string row; std::getline(in, row); ++line) {
    if (line == 20) row = row.substr(0, row.rfind(',')) + ",1e200";
    bad << row << '\n';
  }
  bad.close();
  // Each rank records its own exit status (the launcher reports only one).
  const fs::path codes = tmp.path() / "codes.txt";
  const std::string program = kProgram + " route " + kSample + "network.gpkg --inflow " +
                              shellQuoted((tmp.path() / "bad.csv").string()) + " --out " +
                              shellQuoted((tmp.path() / "out.gpkg").string()) + " --csv " +
                              shellQuoted((tmp.path() / "csv").string()) + " --quiet";
  const CliRun run = runShell(std::string(REACHWISE_MPIRUN) + " -n 3 sh -c " +
                              shellQuoted(program + "; echo \"$OMPI_COMM_WORLD_RANK $?\" >> " +
                                          shellQuoted(codes.string())));
  EXPECT_EQ(run.code, 0) << run.err;  // the wrapping shells
  const std::vector<std::string> lines = sortedLines(codes);
  EXPECT_EQ(lines, (std::vector<std::string>{"0 1", "1 1", "2 1"}));
  // The message once (rank 0 speaks), naming file, line, reach and field.
  const std::string& err = run.err;
  const std::size_t first = err.find("error: ");
  ASSERT_NE(first, std::string::npos) << err;
  EXPECT_EQ(err.find("error: ", first + 1), std::string::npos) << err;
  EXPECT_TRUE(contains(err, "bad.csv, line 21, reach R41, field discharge")) << err;
  EXPECT_FALSE(fs::exists(tmp.path() / "out.gpkg"));
  EXPECT_FALSE(fs::exists(tmp.path() / "csv"));
  std::size_t left = 0;
  for ([[maybe_unused]] const auto& e : fs::directory_iterator(tmp.path())) ++left;
  EXPECT_EQ(left, 2u) << "only bad.csv and codes.txt";
}

TEST(MpiRoute, OtherCommandsRefuseSeveralRanks) {
  const CliRun run = runShell(std::string(REACHWISE_MPIRUN) + " -n 2 " + kProgram + " check " + kSample +
                              "network.gpkg");
  EXPECT_NE(run.code, 0);
  EXPECT_TRUE(contains(run.err, "only `route` and `demo` run across MPI ranks")) << run.err;
}

// An ensemble (--members) is routed in one process: under several ranks
// every rank refuses, the message comes once (rank 0) and no output is left.
/// Members m0..m4: the sample inflow times 0.6, 0.8, 1, 1.2, 1.4 (m`bad`:
/// one discharge above what the reader takes, at line 21 of R41).
void writeMembers(const fs::path& dir, int bad = -1) {
  writeScaledMembers(dir, {0.6, 0.8, 1.0, 1.2, 1.4}, "m", bad);
}

TEST(MpiRoute, AnEnsembleSpreadOverRanksGivesTheSameOutputs) {
  // Members 0, 2, 4 on rank 0 and 1, 3 on rank 1 (or 0, 3 / 1, 4 / 2 on
  // three ranks): the percentiles, every member's peaks and hydrographs
  // equal those of one process.
  TempDir tmp;
  writeMembers(tmp.path() / "members");
  const std::string args = kSample + "network.gpkg --members " + shellQuoted((tmp.path() / "members").string()) +
                           " --lateral " + kSample + "lateral.csv --hydrographs outlets";
  const CliRun one = routeInto(tmp.path() / "alone", args, 0, false);
  ASSERT_EQ(one.code, 0) << one.err;
  for (const int ranks : {2, 3}) {
    const fs::path dir = tmp.path() / ("ranks" + std::to_string(ranks));
    const CliRun run = routeInto(dir, args, ranks, false);
    ASSERT_EQ(run.code, 0) << run.err;
    expectSameOutputs(tmp.path() / "alone", dir, ranks);
  }
  const std::vector<std::string> members = sortedLines(tmp.path() / "alone/csv/member_reaches.csv");
  EXPECT_EQ(members.size(), 1 + 5 * 41u) << "a row per member and reach";
}

TEST(MpiRoute, ABadMemberOnAnotherRankFailsEveryRankAndLeavesNoOutput) {
  TempDir tmp;
  writeMembers(tmp.path() / "members", 1);  // member 1: rank 1's
  const CliRun run = routeInto(tmp.path() / "run",
                               kSample + "network.gpkg --members " + shellQuoted((tmp.path() / "members").string()),
                               2, false);
  EXPECT_NE(run.code, 0);
  const std::size_t first = run.err.find("error: ");
  ASSERT_NE(first, std::string::npos) << run.err;
  EXPECT_EQ(run.err.find("error: ", first + 1), std::string::npos) << run.err;
  EXPECT_TRUE(contains(run.err, "m1.csv, line 21, reach R41")) << run.err;
  EXPECT_FALSE(fs::exists(tmp.path() / "run/out.gpkg"));
  EXPECT_FALSE(fs::exists(tmp.path() / "run/csv"));
}
