#include "support/Scratch.hpp"
#include "reachwise/io/Observed.hpp"

#include <cmath>
#include <fstream>

#include <fmt/format.h>
#include <gtest/gtest.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingCsv.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

class ObservedTest : public ::testing::Test {
protected:
  fs::path write(const std::string& name, const std::string& text) {
    const fs::path p = tmp_.path() / name;
    std::ofstream(p, std::ios::binary) << text;
    return p;
  }
  testsupport::TempDir tmp_;
};

// 2026-05-01T00:00:00Z, seconds since the epoch (from `date -u -d ... +%s`).
constexpr std::int64_t kMay1 = 1777593600;

}  // namespace

// Hourly observations with a missing value (NA) and an empty cell, put on a
// 30-min axis: hours carry the observation, half hours the mean of the two
// hours around them (linear interpolation), and nothing is compared across
// the missing hour or outside the record.
TEST_F(ObservedTest, HourlyRecordOnAHalfHourAxis) {
  const auto path = write("obs.csv",
                          "time,G1,G2\n"
                          "2026-05-01T00:00:00Z,10,1\n"
                          "2026-05-01T01:00:00Z,20,\n"
                          "2026-05-01T02:00:00Z,NA,3\n"
                          "2026-05-01T03:00:00Z,40,4\n");
  const auto axis = routing::TimeAxis::make(kMay1, 1800, 10);  // 00:00 .. 04:30
  const Observations obs = readObservations(path, axis);
  const auto& g1 = obs.values.at("G1");
  ASSERT_EQ(g1.size(), 10u);
  EXPECT_DOUBLE_EQ(g1[0], 10);
  EXPECT_DOUBLE_EQ(g1[1], 15);  // halfway between 10 and 20
  EXPECT_DOUBLE_EQ(g1[2], 20);
  EXPECT_TRUE(std::isnan(g1[3]));  // 01:30: the next observation is 03:00, more than a step away
  EXPECT_TRUE(std::isnan(g1[4]));  // 02:00 is missing (NA)
  EXPECT_TRUE(std::isnan(g1[5]));
  EXPECT_DOUBLE_EQ(g1[6], 40);
  for (std::size_t i = 7; i < 10; ++i) EXPECT_TRUE(std::isnan(g1[i])) << i;  // never held past the record
  const auto& g2 = obs.values.at("G2");
  EXPECT_DOUBLE_EQ(g2[0], 1);
  EXPECT_TRUE(std::isnan(g2[1]));  // the empty cell at 01:00 leaves 00:00–02:00 uncompared
  EXPECT_DOUBLE_EQ(g2[4], 3);
  EXPECT_DOUBLE_EQ(g2[5], 3.5);
  EXPECT_TRUE(obs.warnings.empty());
}

// Observations on a finer step than the run are sampled at the run's times;
// a linear record is reproduced exactly wherever it is interpolated.
TEST_F(ObservedTest, FinerRecordAndOtherTimeZone) {
  std::string text = "reach_id,time,discharge\n";
  // 10-min observations stamped at +02:00, q = 5 + minutes since 00:00Z / 10.
  for (int m = 0; m <= 180; m += 10) {
    const int local = m + 120;
    text += fmt::format("G7,2026-05-01T{:02d}:{:02d}:00+02:00,{}\n", local / 60, local % 60, 5 + m / 10.0);
  }
  const auto axis = routing::TimeAxis::make(kMay1 + 900, 900, 13);  // 00:15Z to 03:15Z every 15 min
  const Observations obs = readObservations(write("long.csv", text), axis);
  const auto& g = obs.values.at("G7");
  for (std::size_t i = 0; i < 12; ++i) {
    const double minutes = 15.0 + 15.0 * static_cast<double>(i);
    EXPECT_NEAR(g[i], 5 + minutes / 10.0, 1e-12) << i;
  }
  EXPECT_TRUE(std::isnan(g[12]));  // 03:15Z lies past the record
}

TEST_F(ObservedTest, MissingMarkersOnlyForObservations) {
  const auto path = write("long.csv",
                          "reach_id,time,discharge\n"
                          "G1,2026-05-01T00:00:00Z,3\n"
                          "G1,2026-05-01T01:00:00Z,nan\n"
                          "G1,2026-05-01T02:00:00Z,\n"
                          "G1,2026-05-01T03:00:00Z,6\n");
  const auto axis = routing::TimeAxis::make(kMay1, 3600, 4);
  const Observations obs = readObservations(path, axis);
  EXPECT_DOUBLE_EQ(obs.values.at("G1")[0], 3);
  EXPECT_TRUE(std::isnan(obs.values.at("G1")[1]));
  EXPECT_DOUBLE_EQ(obs.values.at("G1")[3], 6);
  // As forcing, the same file is refused at its first missing value.
  try {
    (void)readForcingCsvFile(path);
    ADD_FAILURE() << "forcing with a missing value was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line, 3) << e.what();
  }
}

TEST_F(ObservedTest, BadValuesNameFileAndLineAndRecordsOutsideTheRunWarn) {
  const auto bad = write("bad.csv",
                         "reach_id,time,discharge\n"
                         "G1,2026-05-01T00:00:00Z,3\n"
                         "G1,2026-05-01T01:00:00Z,-2\n");
  const auto axis = routing::TimeAxis::make(kMay1, 3600, 4);
  try {
    (void)readObservations(bad, axis);
    ADD_FAILURE() << "a negative observation was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, bad.string());
    EXPECT_EQ(e.where().line, 3);
    EXPECT_EQ(e.where().field, "discharge");
  }
  const auto late = write("late.csv",
                          "reach_id,time,discharge\n"
                          "G9,2027-01-01T00:00:00Z,3\n"
                          "G9,2027-01-01T01:00:00Z,4\n");
  const Observations obs = readObservations(late, axis);
  ASSERT_EQ(obs.warnings.size(), 1u);
  EXPECT_NE(obs.warnings.front().find("G9"), std::string::npos);
  EXPECT_NE(obs.warnings.front().find("late.csv"), std::string::npos);
}
