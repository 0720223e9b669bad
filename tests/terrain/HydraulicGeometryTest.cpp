// Bankfull width and depth from drainage area, side slope and Manning's n
// from the class table, and which values win. Expected values worked by hand.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "network/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/terrain/HydraulicGeometry.hpp"

namespace reachwise::terrain {
namespace {

using network::ReachGraph;
using network::ReachTable;
using network::testing::TableBuilder;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Areas with the given km² (source field).
std::vector<AreaValue> areas(std::initializer_list<double> km2) {
  std::vector<AreaValue> out;
  for (double a : km2) out.push_back({a, AreaSource::Field, a, AreaSource::Field});
  return out;
}

/// H1, H2 (order 1) → C (order 2); no width, n or side slope given.
ReachTable bare() {
  ReachTable t = TableBuilder().link("H1", "C").link("H2", "C").link("C", std::nullopt).build();
  for (auto& r : t.reaches) {
    r.section.bottom_width_m = kNaN;
    r.section.manning_n = kNaN;
    r.section.side_slope = 0.0;  // what the reader stores when none is given
  }
  return t;
}

TEST(PowerLaw, WidthAndDepthWorkedByHand) {
  // w = 2.70 × 100^0.352 = 2.70 × 10^0.704 = 2.70 × 5.058247 = 13.657266 m
  // d = 0.30 × 100^0.213 = 0.30 × 10^0.426 = 0.30 × 2.666859 = 0.800058 m
  EXPECT_NEAR(kDefaultWidth.at(100.0), 13.657266, 1e-6);
  EXPECT_NEAR(kDefaultDepth.at(100.0), 0.800058, 1e-6);
  EXPECT_DOUBLE_EQ(kDefaultWidth.at(1.0), 2.70);  // A^b = 1 at 1 km²
  // User coefficients: w = 5 A^0.5 at 16 km² = 5 × 4 = 20 m.
  EXPECT_DOUBLE_EQ((PowerLaw{5.0, 0.5}).at(16.0), 20.0);
  EXPECT_TRUE(std::isnan(kDefaultWidth.at(kNaN)));
  EXPECT_TRUE(std::isnan(kDefaultWidth.at(-1.0)));
}

TEST(BottomWidth, FromBankfullWidthSideSlopeAndDepth) {
  // 13.657266 − 2 × 2 × 0.800058 = 13.657266 − 3.200232 = 10.457034 m
  EXPECT_NEAR(bottomWidthFromBankfull(13.657266, 2.0, 0.800058), 10.457034, 1e-9);
  // Flat banks would leave no bottom: 10 − 2 × 4 × 1 = 2 < 10 / 2 = 5.
  EXPECT_DOUBLE_EQ(bottomWidthFromBankfull(10.0, 4.0, 1.0), 5.0);
  // Without a depth the bankfull width is the bottom width.
  EXPECT_DOUBLE_EQ(bottomWidthFromBankfull(10.0, 2.0, kNaN), 10.0);
}

TEST(HydraulicGeometry, DefaultsFillATrapezoid) {
  const ReachTable t = bare();
  const ReachGraph g(t);
  const auto d = hydraulicGeometry(g, areas({100, 100, 200}), HydraulicGeometryOptions{});
  EXPECT_EQ(d[0].strahler_order, 1);
  EXPECT_EQ(d[2].strahler_order, 2);
  EXPECT_NEAR(d[0].bankfull_width_m, 13.657266, 1e-6);
  EXPECT_NEAR(d[0].bankfull_depth_m, 0.800058, 1e-6);
  EXPECT_NEAR(d[0].section.bottom_width_m, 10.457036, 1e-6);  // z = 2 (default)
  EXPECT_EQ(d[0].bottom_width, AttributeSource::HydraulicGeometry);
  EXPECT_DOUBLE_EQ(d[0].section.side_slope, kDefaultSideSlope);
  EXPECT_EQ(d[0].side_slope, AttributeSource::Default);
  EXPECT_DOUBLE_EQ(d[0].section.manning_n, kDefaultManningN);
  EXPECT_EQ(d[0].manning_n, AttributeSource::Default);
  EXPECT_EQ(d[0].bank_depth, AttributeSource::None);  // a trapezoid has no bank depth
  // C at 200 km²: w = 2.70 × 200^0.352; ln 200 = 5.298317, × 0.352 =
  // 1.865008, e^ = 6.455986, w = 17.431161 m; d = 0.30 × e^(5.298317 ×
  // 0.213 = 1.128542) = 0.30 × 3.091145 = 0.927343 m; b = 17.431161 −
  // 4 × 0.927343 = 13.721787 m (tolerance: 6-digit hand rounding).
  EXPECT_NEAR(d[2].section.bottom_width_m, 13.721787, 1e-5);
  // The sections are valid for routing.
  for (const auto& s : d) EXPECT_NO_THROW(hydraulics::Section::fromSpec([&] {
    auto spec = s.section;
    spec.bed_slope = 0.001;
    return spec;
  }()));
}

TEST(HydraulicGeometry, WithoutDepthRelationTheWidthIsTheBottomWidth) {
  const ReachTable t = bare();
  const ReachGraph g(t);
  HydraulicGeometryOptions o;
  o.depth.reset();
  o.width = {5.0, 0.5};
  const auto d = hydraulicGeometry(g, areas({16, 9, 25}), o);
  EXPECT_DOUBLE_EQ(d[0].section.bottom_width_m, 20.0);  // 5 × √16
  EXPECT_DOUBLE_EQ(d[1].section.bottom_width_m, 15.0);  // 5 × √9
  EXPECT_DOUBLE_EQ(d[2].section.bottom_width_m, 25.0);  // 5 × √25
  EXPECT_TRUE(std::isnan(d[2].bankfull_depth_m));
}

TEST(HydraulicGeometry, ClassTableByOrderAndByValue) {
  const ReachTable t = bare();
  const ReachGraph g(t);
  HydraulicGeometryOptions o;
  ChannelClass headwaters;  // orders [1]: steep banks, rough
  headwaters.orders = {1};
  headwaters.side_slope = 1.0;
  headwaters.manning_n = 0.05;
  ChannelClass larger;  // orders 2 and up: only n
  larger.min_order = 2;
  larger.max_order = 65535;
  larger.manning_n = 0.03;
  o.classes = {headwaters, larger};
  o.default_side_slope = 3.0;
  auto d = hydraulicGeometry(g, areas({100, 100, 200}), o);
  EXPECT_DOUBLE_EQ(d[0].section.side_slope, 1.0);
  EXPECT_EQ(d[0].side_slope, AttributeSource::ClassTable);
  EXPECT_DOUBLE_EQ(d[0].section.manning_n, 0.05);
  // z = 1: b = 13.657266 − 2 × 1 × 0.800058 = 12.057150 m
  EXPECT_NEAR(d[0].section.bottom_width_m, 12.057150, 1e-6);
  EXPECT_DOUBLE_EQ(d[2].section.manning_n, 0.03);
  EXPECT_EQ(d[2].manning_n, AttributeSource::ClassTable);
  EXPECT_DOUBLE_EQ(d[2].section.side_slope, 3.0);  // the class sets no z: the default
  EXPECT_EQ(d[2].side_slope, AttributeSource::Default);

  // Keyed on a class field: a value class placed first wins over the orders.
  ChannelClass braided;
  braided.value = "braided";
  braided.manning_n = 0.045;
  o.classes.insert(o.classes.begin(), braided);
  o.class_values = {std::nullopt, std::string("braided"), std::string("single")};
  d = hydraulicGeometry(g, areas({100, 100, 200}), o);
  EXPECT_DOUBLE_EQ(d[0].section.manning_n, 0.05);   // no value: by order
  EXPECT_DOUBLE_EQ(d[1].section.manning_n, 0.045);  // braided
  EXPECT_DOUBLE_EQ(d[1].section.side_slope, 1.0);   // braided sets no z: order 1's
  EXPECT_DOUBLE_EQ(d[2].section.manning_n, 0.03);   // "single" matches no value class
}

TEST(HydraulicGeometry, LayerValuesWinUnlessReplaced) {
  ReachTable t = bare();
  t.reaches[0].section.bottom_width_m = 7.0;
  t.reaches[0].section.manning_n = 0.06;
  t.reaches[0].section.side_slope = 1.5;
  const ReachGraph g(t);
  HydraulicGeometryOptions o;
  auto d = hydraulicGeometry(g, areas({100, 100, 200}), o);
  EXPECT_DOUBLE_EQ(d[0].section.bottom_width_m, 7.0);
  EXPECT_EQ(d[0].bottom_width, AttributeSource::Field);
  EXPECT_DOUBLE_EQ(d[0].section.manning_n, 0.06);
  EXPECT_EQ(d[0].manning_n, AttributeSource::Field);
  EXPECT_DOUBLE_EQ(d[0].section.side_slope, 1.5);
  EXPECT_EQ(d[0].side_slope, AttributeSource::Field);

  o.replace = {Attribute::BottomWidth, Attribute::ManningN};
  d = hydraulicGeometry(g, areas({100, 100, 200}), o);
  // z = 1.5 is kept: b = 13.657266 − 2 × 1.5 × 0.800058 = 11.257093 m
  EXPECT_NEAR(d[0].section.bottom_width_m, 11.257093, 1e-6);
  EXPECT_EQ(d[0].bottom_width, AttributeSource::HydraulicGeometry);
  EXPECT_DOUBLE_EQ(d[0].section.manning_n, kDefaultManningN);
  EXPECT_EQ(d[0].manning_n, AttributeSource::Default);
  EXPECT_EQ(d[0].side_slope, AttributeSource::Field);

  // No drainage area: a width to be replaced stays the layer's.
  d = hydraulicGeometry(g, areas({kNaN, 100, 200}), o);
  EXPECT_DOUBLE_EQ(d[0].section.bottom_width_m, 7.0);
  EXPECT_EQ(d[0].bottom_width, AttributeSource::Field);
}

TEST(HydraulicGeometry, TwoStageAndPipeSections) {
  ReachTable t = bare();
  t.reaches[0].section.shape = hydraulics::Shape::TwoStage;
  t.reaches[0].section.floodplain_width_m = 100;
  t.reaches[0].section.floodplain_n = 0.08;
  t.reaches[1].section.shape = hydraulics::Shape::Circle;
  t.reaches[1].section.diameter_m = 1.2;
  const ReachGraph g(t);
  const auto d = hydraulicGeometry(g, areas({100, 100, 200}), HydraulicGeometryOptions{});
  EXPECT_NEAR(d[0].section.bank_depth_m, 0.800058, 1e-6);
  EXPECT_EQ(d[0].bank_depth, AttributeSource::HydraulicGeometry);
  EXPECT_NEAR(d[0].section.bottom_width_m, 10.457036, 1e-6);
  EXPECT_TRUE(std::isnan(d[1].section.bottom_width_m));  // a pipe keeps its geometry
  EXPECT_DOUBLE_EQ(d[1].section.diameter_m, 1.2);
  EXPECT_EQ(d[1].bottom_width, AttributeSource::None);
  EXPECT_DOUBLE_EQ(d[1].section.manning_n, kDefaultManningN);
}

TEST(HydraulicGeometry, WrongSizesAreErrors) {
  const ReachTable t = bare();
  const ReachGraph g(t);
  EXPECT_THROW(hydraulicGeometry(g, areas({1, 2}), HydraulicGeometryOptions{}), InvalidParameter);
  HydraulicGeometryOptions o;
  o.class_values = {std::string("a")};
  EXPECT_THROW(hydraulicGeometry(g, areas({1, 2, 3}), o), InvalidParameter);
}

TEST(AttributeNames, RoundTrip) {
  for (auto a : {Attribute::BottomWidth, Attribute::BankDepth, Attribute::SideSlope, Attribute::ManningN})
    EXPECT_EQ(attributeNamed(attributeName(a)), a);
  EXPECT_FALSE(attributeNamed("width"));
  EXPECT_EQ(attributeSourceName(AttributeSource::HydraulicGeometry), "hydraulic_geometry");
  EXPECT_EQ(attributeSourceName(AttributeSource::ClassTable), "class_table");
}

}  // namespace
}  // namespace reachwise::terrain
