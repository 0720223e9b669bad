// The `[prepare]` table of a run file (docs/formats.md, "Preparing a network").
#include <gtest/gtest.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/PrepareConfig.hpp"

using reachwise::InputError;
using reachwise::io::PrepareConfig;

TEST(PrepareConfig, DefaultsWithoutTheTable) {
  const auto c = PrepareConfig::fromString("[network]\nlayer = \"x\"\n", "run.toml");
  EXPECT_DOUBLE_EQ(c.min_slope, 1e-4);
  EXPECT_DOUBLE_EQ(c.rise_threshold_m, 2.0);
  EXPECT_DOUBLE_EQ(c.sample_spacing_m, 0.0);
  EXPECT_FALSE(c.replaces("slope"));
}

TEST(PrepareConfig, ReadsEveryKey) {
  const auto c = PrepareConfig::fromString(
      "[prepare]\nmin_slope = 5e-4\nrise_threshold_m = 1\nsample_spacing_m = 12.5\nreplace = [\"slope\", \"elevations\"]\n",
      "run.toml");
  EXPECT_DOUBLE_EQ(c.min_slope, 5e-4);
  EXPECT_DOUBLE_EQ(c.rise_threshold_m, 1.0);  // an integer reads as a number
  EXPECT_DOUBLE_EQ(c.sample_spacing_m, 12.5);
  EXPECT_TRUE(c.replaces("slope"));
  EXPECT_TRUE(c.replaces("elevations"));
}

TEST(PrepareConfig, BadValuesNameFileAndKey) {
  auto fails = [](const std::string& text, const std::string& key) {
    try {
      PrepareConfig::fromString(text, "run.toml");
      ADD_FAILURE() << "accepted: " << text;
    } catch (const InputError& e) {
      EXPECT_EQ(e.where().file, "run.toml");
      EXPECT_EQ(e.where().field, key) << text;
    }
  };
  fails("[prepare]\nmin_slope = 0\n", "prepare.min_slope");
  fails("[prepare]\nmin_slope = \"low\"\n", "prepare.min_slope");
  fails("[prepare]\nrise_threshold_m = -1\n", "prepare.rise_threshold_m");
  fails("[prepare]\nreplace = [\"width\"]\n", "prepare.replace");
  fails("[prepare]\nreplace = \"slope\"\n", "prepare.replace");
  fails("[prepare]\nslope_min = 1e-4\n", "prepare.slope_min");
}
