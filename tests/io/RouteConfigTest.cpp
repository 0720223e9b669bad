// The [route] table of a run file (docs/formats.md).
#include <gtest/gtest.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/RouteConfig.hpp"

using reachwise::InputError;
using reachwise::io::RouteConfig;

TEST(RouteConfig, ReadsEveryKeyAndResolvesPathsFromTheFilesFolder) {
  const RouteConfig c = RouteConfig::fromString(R"(
[network]
layer = "reaches"
[route]
inflow = "forcing/in.csv"
lateral = "/data/lat.nc"
members = "forecast/m-*.csv"
method = "mc"
dt = 900
diffusion_below = 12.5
spread_budget = 0.003
out = "out.gpkg"
csv = "tables"
series = "s.nc"
report = "report"
save_state = "states/end.nc"
initial_state = "/data/start.nc"
hydrographs = ["outlets", 17, "R3"]
threads = 2
write_back = false
overwrite = true
quiet = true
units = "us"
)",
                                                "/runs/a/run.toml");
  EXPECT_EQ(*c.inflow, "/runs/a/forcing/in.csv");
  EXPECT_EQ(*c.lateral, "/data/lat.nc");
  EXPECT_EQ(*c.members, "/runs/a/forecast/m-*.csv");
  EXPECT_EQ(*c.method, "mc");
  EXPECT_EQ(*c.dt_s, 900.0);
  EXPECT_EQ(*c.diffusion_below, 12.5);
  EXPECT_EQ(*c.spread_budget, 0.003);
  EXPECT_EQ(*c.out, "/runs/a/out.gpkg");
  EXPECT_EQ(*c.csv, "/runs/a/tables");
  EXPECT_EQ(*c.series, "/runs/a/s.nc");
  EXPECT_EQ(*c.report, "/runs/a/report");
  EXPECT_EQ(*c.save_state, "/runs/a/states/end.nc");
  EXPECT_EQ(*c.initial_state, "/data/start.nc");
  EXPECT_EQ(*c.hydrographs, "outlets,17,R3");
  EXPECT_EQ(*c.threads, 2u);
  EXPECT_FALSE(*c.write_back);
  EXPECT_TRUE(*c.overwrite);
  EXPECT_TRUE(*c.quiet);
  EXPECT_EQ(*c.units, "us");
}

TEST(RouteConfig, AbsentTableLeavesEverythingUnset) {
  const RouteConfig c = RouteConfig::fromString("[network]\nlayer = \"x\"\n", "run.toml");
  EXPECT_FALSE(c.inflow || c.method || c.dt_s || c.threads || c.overwrite);
}

TEST(RouteConfig, BadValuesNameTheFileAndKey) {
  auto message = [](const std::string& text) {
    try {
      RouteConfig::fromString(text, "run.toml");
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_NE(message("[route]\nspeed = 1\n").find("route.speed"), std::string::npos);
  EXPECT_NE(message("[route]\nmethod = \"kinematic\"\n").find("route.method"), std::string::npos);
  EXPECT_NE(message("[route]\ndt = -5\n").find("route.dt"), std::string::npos);
  EXPECT_NE(message("[route]\nthreads = 0\n").find("route.threads"), std::string::npos);
  EXPECT_NE(message("[route]\nquiet = \"yes\"\n").find("route.quiet"), std::string::npos);
  EXPECT_NE(message("[route]\ninflow = 3\n").find("route.inflow"), std::string::npos);
  EXPECT_NE(message("[route]\nunits = \"feet\"\n").find("route.units"), std::string::npos);
  EXPECT_NE(message("[route]\nunits = 1\n").find("route.units"), std::string::npos);
  EXPECT_NE(message("[route\n").find("run.toml"), std::string::npos);
  // The ranges route's flags take: a Ponce number of 0 or more, a budget in [0, 0.1].
  EXPECT_NE(message("[route]\ndiffusion_below = -1\n").find("route.diffusion_below"), std::string::npos);
  EXPECT_NE(message("[route]\ndiffusion_below = nan\n").find("route.diffusion_below"), std::string::npos);
  EXPECT_NE(message("[route]\nspread_budget = 0.2\n").find("route.spread_budget"), std::string::npos);
  EXPECT_NE(message("[route]\nspread_budget = -0.001\n").find("route.spread_budget"), std::string::npos);
  EXPECT_EQ(message("[route]\nspread_budget = 0\ndiffusion_below = 0\nmethod = \"diffusion\"\n"), "no error");
}
