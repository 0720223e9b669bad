// The [calibrate] table of a run file (docs/formats.md, "Calibration").
#include <gtest/gtest.h>

#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/CalibrateConfig.hpp"

using reachwise::InputError;
using reachwise::io::CalibrateConfig;

TEST(CalibrateConfig, ReadsEveryKey) {
  const CalibrateConfig c = CalibrateConfig::fromString(R"(
[network]
layer = "reaches"
[route]
method = "mc"
[calibrate]
parameter = "width"
objective = "nse_peak"
lower = 0.25
upper = 4
max_evaluations = 120
tolerance = 1e-4
min_observations = 24
)",
                                                        "/runs/a/run.toml");
  EXPECT_EQ(*c.parameter, "width");
  EXPECT_EQ(*c.objective, "nse_peak");
  EXPECT_EQ(*c.lower, 0.25);
  EXPECT_EQ(*c.upper, 4.0);  // an integer is a number too
  EXPECT_EQ(*c.max_evaluations, 120u);
  EXPECT_EQ(*c.tolerance, 1e-4);
  EXPECT_EQ(*c.min_observations, 24u);
}

TEST(CalibrateConfig, AbsentTableOrKeysLeaveThemUnset) {
  const CalibrateConfig none = CalibrateConfig::fromString("[route]\nmethod = \"mc\"\n", "run.toml");
  EXPECT_FALSE(none.parameter || none.objective || none.lower || none.upper || none.max_evaluations ||
               none.tolerance || none.min_observations);
  const CalibrateConfig some = CalibrateConfig::fromString("[calibrate]\nupper = 3\n", "run.toml");
  EXPECT_FALSE(some.lower);
  EXPECT_EQ(*some.upper, 3.0);
}

TEST(CalibrateConfig, BadKeysTypesAndSettingsNameTheFileAndKey) {
  auto message = [](const std::string& text) {
    try {
      CalibrateConfig::fromString(text, "run.toml");
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  const auto names = [&](const std::string& text, const std::string& key) {
    const std::string m = message(text);
    return m.find(key) != std::string::npos && m.find("run.toml") != std::string::npos;
  };
  EXPECT_TRUE(names("[calibrate]\nbounds = [0.5, 2]\n", "calibrate.bounds")) << message("[calibrate]\nbounds = 1\n");
  EXPECT_TRUE(names("calibrate = 3\n", "calibrate"));
  EXPECT_TRUE(names("[calibrate]\nparameter = \"k\"\n", "calibrate.parameter"));
  EXPECT_TRUE(names("[calibrate]\nparameter = 1\n", "calibrate.parameter"));
  EXPECT_TRUE(names("[calibrate]\nobjective = \"rmse\"\n", "calibrate.objective"));
  EXPECT_TRUE(names("[calibrate]\nlower = \"0.5\"\n", "calibrate.lower"));
  EXPECT_TRUE(names("[calibrate]\nlower = true\n", "calibrate.lower"));
  EXPECT_TRUE(names("[calibrate]\nlower = 0\n", "calibrate.lower"));
  EXPECT_TRUE(names("[calibrate]\nupper = -1\n", "calibrate.upper"));
  EXPECT_TRUE(names("[calibrate]\nupper = nan\n", "calibrate.upper"));
  EXPECT_TRUE(names("[calibrate]\nlower = 2\nupper = 2\n", "calibrate.lower"));
  EXPECT_TRUE(names("[calibrate]\nlower = 3\nupper = 2\n", "calibrate.lower"));
  EXPECT_TRUE(names("[calibrate]\nmax_evaluations = 2.5\n", "calibrate.max_evaluations"));
  EXPECT_TRUE(names("[calibrate]\nmax_evaluations = 3\n", "calibrate.max_evaluations"));
  EXPECT_TRUE(names("[calibrate]\ntolerance = 0\n", "calibrate.tolerance"));
  EXPECT_TRUE(names("[calibrate]\ntolerance = 1\n", "calibrate.tolerance"));
  EXPECT_TRUE(names("[calibrate]\nmin_observations = 0\n", "calibrate.min_observations"));
  EXPECT_TRUE(names("[calibrate]\nmin_observations = \"10\"\n", "calibrate.min_observations"));
}
