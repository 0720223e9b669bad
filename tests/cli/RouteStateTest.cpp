// `reachwise route --save-state FILE` and `--initial-state FILE`, and the
// run-file keys `save_state` and `initial_state`: a record routed whole
// and in two pieces on a network with a confluence, a lake and a
// bifurcation (tests/support/StateNetwork.hpp), compared through the
// NetCDF series files the runs write; a state that does not fit the run is
// refused with exit status 1 and no output left behind.
#include <gtest/gtest.h>
#include <netcdf.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"
#include "support/StateNetwork.hpp"

namespace fs = std::filesystem;

namespace {

struct Series {
  std::vector<std::string> ids;
  std::vector<double> outflow;  // time × reach
  std::size_t steps = 0;
  double at(std::size_t n, std::size_t r) const { return outflow[n * ids.size() + r]; }
};

Series readSeries(const fs::path& path) {
  Series s;
  int nc = -1, d = -1, v = -1;
  EXPECT_EQ(nc_open(path.c_str(), NC_NOWRITE, &nc), NC_NOERR) << path;
  if (nc < 0) return s;
  std::size_t reaches = 0;
  nc_inq_dimid(nc, "time", &d);
  nc_inq_dimlen(nc, d, &s.steps);
  nc_inq_dimid(nc, "reach", &d);
  nc_inq_dimlen(nc, d, &reaches);
  std::vector<char*> ids(reaches);
  nc_inq_varid(nc, "reach_id", &v);
  nc_get_var_string(nc, v, ids.data());
  for (char* id : ids) s.ids.emplace_back(id);
  nc_free_string(reaches, ids.data());
  s.outflow.resize(s.steps * reaches);
  nc_inq_varid(nc, "outflow", &v);
  nc_get_var_double(nc, v, s.outflow.data());
  nc_close(nc);
  return s;
}

bool contains(const std::string& s, const std::string& part) { return s.find(part) != std::string::npos; }

class RouteState : public ::testing::Test {
protected:
  testsupport::TempDir dir;
  std::string at(const std::string& name) const { return (dir.path() / name).string(); }
  std::string base() const { return at("net.gpkg") + " --lakes " + at("lakes.gpkg") + " --quiet --threads 1 "; }
  void SetUp() override {
    testsupport::writeStateNetwork(at("net.gpkg"), testsupport::stateLines());
    testsupport::writeStateLakes(at("lakes.gpkg"));
    testsupport::writeStateInflow(at("whole.csv"), 0, 71);
    testsupport::writeStateInflow(at("first.csv"), 0, 36);
    testsupport::writeStateInflow(at("second.csv"), 36, 71);
  }
};

}  // namespace

// The first piece saves with the flag, the second starts (and saves
// again) through the run file. The pieces' outflows equal the whole run's
// to 1e-12 of the peak (the same computation cut in two; the series files
// store doubles).
TEST_F(RouteState, FlagsAndRunFileKeysChainTwoPieces) {
  auto r = testsupport::runReachwise("route " + base() + "--method mc --inflow " + at("whole.csv") + " --out " +
                                     at("whole.gpkg") + " --series " + at("whole.nc"));
  ASSERT_EQ(r.code, 0) << r.err;
  r = testsupport::runReachwise("route " + base() + "--method mc --inflow " + at("first.csv") + " --out " +
                                at("first.gpkg") + " --series " + at("first.nc") + " --save-state " + at("s1.nc"));
  ASSERT_EQ(r.code, 0) << r.err;
  ASSERT_TRUE(fs::exists(at("s1.nc")));
  {
    std::ofstream toml(at("run.toml"));
    toml << "[route]\nmethod = \"mc\"\ninflow = \"second.csv\"\ninitial_state = \"s1.nc\"\nsave_state = \"s2.nc\"\n"
            "series = \"second.nc\"\nout = \"second.gpkg\"\n";
  }
  r = testsupport::runReachwise("route " + base() + "--config " + at("run.toml"));
  ASSERT_EQ(r.code, 0) << r.err;
  ASSERT_TRUE(fs::exists(at("s2.nc")));
  const Series whole = readSeries(at("whole.nc")), second = readSeries(at("second.nc"));
  ASSERT_EQ(whole.steps, 72u);
  ASSERT_EQ(second.steps, 36u);
  ASSERT_EQ(whole.ids, second.ids);
  ASSERT_EQ(whole.ids.size(), 6u);
  const double peak = *std::max_element(whole.outflow.begin(), whole.outflow.end());
  for (std::size_t r2 = 0; r2 < whole.ids.size(); ++r2)
    for (std::size_t n = 0; n < 36; ++n)
      EXPECT_NEAR(second.at(n, r2), whole.at(36 + n, r2), 1e-12 * peak) << whole.ids[r2] << " hour " << 36 + n;
  // The second state is at the record's end.
  int nc = -1, v = -1;
  ASSERT_EQ(nc_open(at("s2.nc").c_str(), NC_NOWRITE, &nc), NC_NOERR);
  double t = 0;
  nc_inq_varid(nc, "time", &v);
  nc_get_var_double(nc, v, &t);
  nc_close(nc);
  EXPECT_EQ(t, 1777593600.0 + 71 * 3600);  // 2026-05-03T23:00:00Z
}

// A state that does not fit the run: exit status 1, the state file and
// what does not fit named, and none of the run's outputs (results, series,
// new state) left behind.
TEST_F(RouteState, AStateThatDoesNotFitLeavesNoOutput) {
  auto r = testsupport::runReachwise("route " + base() + "--method mc --inflow " + at("first.csv") + " --out " +
                                     at("first.gpkg") + " --save-state " + at("s1.nc"));
  ASSERT_EQ(r.code, 0) << r.err;
  const auto refused = [&](const std::string& args, const std::vector<std::string>& parts) {
    const auto run = testsupport::runReachwise("route " + base() + args + " --out " + at("bad.gpkg") + " --series " +
                                               at("bad.nc") + " --save-state " + at("bad-state.nc"));
    EXPECT_EQ(run.code, 1) << args << "\n" << run.err;
    std::printf("%s", run.err.c_str());
    for (const auto& p : parts) EXPECT_TRUE(contains(run.err, p)) << "missing \"" << p << "\" in: " << run.err;
    for (const char* out : {"bad.gpkg", "bad.nc", "bad-state.nc"}) EXPECT_FALSE(fs::exists(at(out))) << out;
    // No partial file either.
    for (const auto& e : fs::directory_iterator(dir.path()))
      EXPECT_FALSE(contains(e.path().filename().string(), "partial")) << e.path();
  };
  const std::string state = at("s1.nc");
  refused("--method vpmc --inflow " + at("second.csv") + " --initial-state " + state, {state, "`mc`", "`vpmc`"});
  refused("--method mc --inflow " + at("whole.csv") + " --initial-state " + state,
          {state, "2026-05-02T12:00:00Z", "2026-05-01T00:00:00Z"});
  testsupport::writeStateNetwork(at("less.gpkg"), testsupport::stateLines("D"));
  {
    const auto run = testsupport::runReachwise("route " + at("less.gpkg") + " --lakes " + at("lakes.gpkg") +
                                               " --quiet --method mc --inflow " + at("second.csv") +
                                               " --initial-state " + state + " --out " + at("bad.gpkg"));
    EXPECT_EQ(run.code, 1) << run.err;
    EXPECT_TRUE(contains(run.err, state) && contains(run.err, "D") && contains(run.err, "network does not")) << run.err;
    EXPECT_FALSE(fs::exists(at("bad.gpkg")));
  }
  // A damaged state: a section flow made NaN.
  fs::copy_file(state, at("nan.nc"));
  {
    int nc = -1, v = -1;
    ASSERT_EQ(nc_open(at("nan.nc").c_str(), NC_WRITE, &nc), NC_NOERR);
    nc_inq_varid(nc, "discharge", &v);
    const std::size_t i = 1;
    const double nan = std::nan("");
    nc_put_var1_double(nc, v, &i, &nan);
    nc_close(nc);
  }
  refused("--method mc --inflow " + at("second.csv") + " --initial-state " + at("nan.nc"),
          {at("nan.nc"), "discharge", "not finite"});
  // The state file may not replace an input.
  {
    const auto run = testsupport::runReachwise("route " + base() + "--method mc --inflow " + at("second.csv") +
                                               " --initial-state " + state + " --save-state " + state +
                                               " --out " + at("bad.gpkg"));
    EXPECT_EQ(run.code, 1) << run.err;
    EXPECT_TRUE(contains(run.err, "--save-state") && contains(run.err, "--initial-state")) << run.err;
    EXPECT_FALSE(fs::exists(at("bad.gpkg")));
    std::printf("%s", run.err.c_str());
  }
}
