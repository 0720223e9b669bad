// The [prepare] table of a TOML run file.
#include "reachwise/io/PrepareConfig.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "reachwise/Error.hpp"

using namespace reachwise;
using io::PrepareConfig;
using terrain::Attribute;

namespace {

/// The key an InputError names, or "" when none is thrown.
std::string errorKey(const std::string& toml) {
  try {
    PrepareConfig::fromString(toml, "/runs/run.toml");
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "/runs/run.toml");
    return e.where().field;
  }
  return "";
}

}  // namespace

TEST(PrepareConfig, DefaultsWithoutTheTable) {
  const auto cfg = PrepareConfig::fromString("[network]\nlayer = \"x\"\n", "run.toml");
  EXPECT_TRUE(cfg.area_field.empty());
  EXPECT_FALSE(cfg.area_raster.has_value());
  EXPECT_DOUBLE_EQ(cfg.area_field_km2_per_unit, 1.0);
  EXPECT_DOUBLE_EQ(cfg.length_relation.coefficient, 1.4);
  EXPECT_DOUBLE_EQ(cfg.length_relation.exponent, 0.6);
  EXPECT_DOUBLE_EQ(cfg.geometry.width.a, terrain::kDefaultWidth.a);
  ASSERT_TRUE(cfg.geometry.depth.has_value());
  EXPECT_DOUBLE_EQ(cfg.geometry.depth->b, terrain::kDefaultDepth.b);
  EXPECT_TRUE(cfg.geometry.classes.empty());
  EXPECT_TRUE(cfg.geometry.replace.empty());
}

TEST(PrepareConfig, ParsesEveryKey) {
  const auto cfg = PrepareConfig::fromString(R"(
[prepare]
area_field = "DA"
area_field_unit = "mi2"
area_raster = "grids/acc.tif"
area_raster_unit = "m2"
area_search_m = 45
side_slope = 1.5
manning_n = 0.04
class_field = "KIND"
replace = ["bottom_width", "manning_n"]

[prepare.length_relation]
coefficient = 1.6
exponent = 0.57

[prepare.width]
a = 3.1
b = 0.4

[prepare.depth]
a = 0.25

[[prepare.class]]
orders = [1, 2]
side_slope = 1.0
manning_n = 0.05

[[prepare.class]]
min_order = 5
manning_n = 0.03

[[prepare.class]]
value = "braided"
manning_n = 0.045
)",
                                             "/runs/run.toml");
  EXPECT_EQ(cfg.area_field, "DA");
  EXPECT_DOUBLE_EQ(cfg.area_field_km2_per_unit, 2.589988110336);  // 1609.344² m²
  ASSERT_TRUE(cfg.area_raster.has_value());
  EXPECT_EQ(cfg.area_raster->path, "/runs/grids/acc.tif");  // relative to the run file
  EXPECT_EQ(cfg.area_raster->unit, terrain::RasterUnit::SquareMetres);
  EXPECT_DOUBLE_EQ(cfg.area_raster->search_m.value(), 45.0);
  EXPECT_DOUBLE_EQ(cfg.length_relation.coefficient, 1.6);
  EXPECT_DOUBLE_EQ(cfg.length_relation.exponent, 0.57);
  EXPECT_DOUBLE_EQ(cfg.geometry.width.a, 3.1);
  EXPECT_DOUBLE_EQ(cfg.geometry.width.b, 0.4);
  EXPECT_DOUBLE_EQ(cfg.geometry.depth->a, 0.25);
  EXPECT_DOUBLE_EQ(cfg.geometry.depth->b, terrain::kDefaultDepth.b);  // b not given: the default
  EXPECT_DOUBLE_EQ(cfg.geometry.default_side_slope, 1.5);
  EXPECT_DOUBLE_EQ(cfg.geometry.default_manning_n, 0.04);
  EXPECT_EQ(cfg.class_field, "KIND");
  ASSERT_EQ(cfg.geometry.classes.size(), 3u);
  const auto& c1 = cfg.geometry.classes[0];
  EXPECT_TRUE(c1.matches(2, nullptr));
  EXPECT_FALSE(c1.matches(3, nullptr));
  EXPECT_EQ(c1.key, "prepare.class[1]");
  const auto& c2 = cfg.geometry.classes[1];
  EXPECT_FALSE(c2.matches(4, nullptr));
  EXPECT_TRUE(c2.matches(9, nullptr));  // min_order alone: 5 and up
  EXPECT_FALSE(c2.side_slope.has_value());
  const std::string braided = "braided";
  EXPECT_TRUE(cfg.geometry.classes[2].matches(1, &braided));
  EXPECT_FALSE(cfg.geometry.classes[2].matches(1, nullptr));
  EXPECT_EQ(cfg.geometry.replace, (std::vector<Attribute>{Attribute::BottomWidth, Attribute::ManningN}));

  // Field values in the field's unit become km².
  const auto options = cfg.areaOptions({1.0, std::nan("")});
  EXPECT_DOUBLE_EQ(options.field_km2[0], 2.589988110336);
  EXPECT_TRUE(std::isnan(options.field_km2[1]));
  EXPECT_EQ(options.field_name, "DA");
  EXPECT_TRUE(options.raster.has_value());
}

TEST(PrepareConfig, DepthCanBeSwitchedOff) {
  const auto cfg = PrepareConfig::fromString("[prepare]\ndepth = false\n", "run.toml");
  EXPECT_FALSE(cfg.geometry.depth.has_value());
}

TEST(PrepareConfig, DefaultSearchRadiusIsLeftToTheRaster) {
  const auto cfg = PrepareConfig::fromString("[prepare]\narea_raster = \"/abs/acc.tif\"\n", "run.toml");
  EXPECT_EQ(cfg.area_raster->path, "/abs/acc.tif");
  EXPECT_EQ(cfg.area_raster->unit, terrain::RasterUnit::Cells);
  EXPECT_FALSE(cfg.area_raster->search_m.has_value());  // 2 cells
}

TEST(PrepareConfig, ErrorsNameTheFileAndKey) {
  EXPECT_EQ(errorKey("[prepare]\ncolour = 1\n"), "prepare.colour");
  EXPECT_EQ(errorKey("prepare = 3\n"), "prepare");
  EXPECT_EQ(errorKey("[prepare]\narea_field = 3\n"), "prepare.area_field");
  EXPECT_EQ(errorKey("[prepare]\narea_field = \"DA\"\narea_field_unit = \"acres\"\n"),
            "prepare.area_field_unit");
  EXPECT_EQ(errorKey("[prepare]\narea_field_unit = \"m2\"\n"), "prepare.area_field_unit");
  EXPECT_EQ(errorKey("[prepare]\narea_raster = \"a.tif\"\narea_raster_unit = \"pixels\"\n"),
            "prepare.area_raster_unit");
  EXPECT_EQ(errorKey("[prepare]\narea_raster_unit = \"cells\"\n"), "prepare.area_raster_unit");
  EXPECT_EQ(errorKey("[prepare]\narea_search_m = 10\n"), "prepare.area_search_m");
  EXPECT_EQ(errorKey("[prepare]\narea_raster = \"a.tif\"\narea_search_m = -1\n"), "prepare.area_search_m");
  EXPECT_EQ(errorKey("[prepare.width]\na = 0\n"), "prepare.width.a");
  EXPECT_EQ(errorKey("[prepare.width]\nc = 1\n"), "prepare.width.c");
  EXPECT_EQ(errorKey("[prepare]\nwidth = 2.7\n"), "prepare.width");
  EXPECT_EQ(errorKey("[prepare.depth]\nb = \"x\"\n"), "prepare.depth.b");
  EXPECT_EQ(errorKey("[prepare.length_relation]\nexponent = 0\n"), "prepare.length_relation.exponent");
  EXPECT_EQ(errorKey("[prepare]\nmanning_n = 0\n"), "prepare.manning_n");
  EXPECT_EQ(errorKey("[prepare]\nside_slope = -1\n"), "prepare.side_slope");
  EXPECT_EQ(errorKey("[prepare]\nreplace = [\"width\"]\n"), "prepare.replace");
  EXPECT_EQ(errorKey("[prepare]\nreplace = \"manning_n\"\n"), "prepare.replace");
  EXPECT_EQ(errorKey("[[prepare.class]]\norders = [0]\nmanning_n = 0.03\n"), "prepare.class[1].orders");
  EXPECT_EQ(errorKey("[[prepare.class]]\norders = [1]\n"), "prepare.class[1]");  // sets nothing
  EXPECT_EQ(errorKey("[[prepare.class]]\nmanning_n = 0.03\n"), "prepare.class[1]");  // no key
  EXPECT_EQ(errorKey("[prepare]\nclass_field = \"K\"\n[[prepare.class]]\norders = [1]\nvalue = \"a\"\nmanning_n = 0.03\n"),
            "prepare.class[1]");
  EXPECT_EQ(errorKey("[[prepare.class]]\nmin_order = 3\nmax_order = 2\nmanning_n = 0.03\n"),
            "prepare.class[1].max_order");
  EXPECT_EQ(errorKey("[[prepare.class]]\norders = [1]\nmanning_n = 0.03\n[[prepare.class]]\norders = [2]\nshade = 1\n"),
            "prepare.class[2].shade");
  // A class keyed on a value needs the class field.
  EXPECT_EQ(errorKey("[[prepare.class]]\nvalue = \"braided\"\nmanning_n = 0.03\n"), "prepare.class_field");
}

TEST(PrepareConfig, SyntaxErrorsNameTheFile) {
  try {
    PrepareConfig::fromString("[prepare\n", "bad.toml");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "bad.toml");
  }
  EXPECT_THROW(PrepareConfig::fromFile("/nonexistent/run.toml"), InputError);
}

// Bed slopes from a DEM.
TEST(PrepareConfig, SlopeDefaultsWithoutTheTable) {
  const auto c = PrepareConfig::fromString("[network]\nlayer = \"x\"\n", "run.toml");
  EXPECT_DOUBLE_EQ(c.min_slope, 1e-4);
  EXPECT_DOUBLE_EQ(c.rise_threshold_m, 2.0);
  EXPECT_DOUBLE_EQ(c.sample_spacing_m, 0.0);
  EXPECT_FALSE(c.replaces("slope"));
}

TEST(PrepareConfig, ReadsTheSlopeKeys) {
  const auto c = PrepareConfig::fromString(
      "[prepare]\nmin_slope = 5e-4\nrise_threshold_m = 1\nsample_spacing_m = 12.5\nreplace = [\"slope\", \"elevations\"]\n",
      "run.toml");
  EXPECT_DOUBLE_EQ(c.min_slope, 5e-4);
  EXPECT_DOUBLE_EQ(c.rise_threshold_m, 1.0);  // an integer reads as a number
  EXPECT_DOUBLE_EQ(c.sample_spacing_m, 12.5);
  EXPECT_TRUE(c.replaces("slope"));
  EXPECT_TRUE(c.replaces("elevations"));
}

TEST(PrepareConfig, BadSlopeValuesNameFileAndKey) {
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
