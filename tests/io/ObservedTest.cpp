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

// Hourly observations with a missing value (NA) and an empty cell. On an
// hourly axis shifted by 30 min, each run time lies midway between two
// hours and gets their mean (linear interpolation); nothing is compared
// across a missing value or outside the record. On a 30-min axis only the
// hours are compared: observations an hour apart are coarser than the step.
TEST_F(ObservedTest, HourlyRecordOnShiftedAndFinerAxes) {
  const auto path = write("obs.csv",
                          "time,G1,G2\n"
                          "2026-05-01T00:00:00Z,10,1\n"
                          "2026-05-01T01:00:00Z,20,\n"
                          "2026-05-01T02:00:00Z,NA,3\n"
                          "2026-05-01T03:00:00Z,40,4\n"
                          "2026-05-01T04:00:00Z,50,5\n");
  const auto shifted = routing::TimeAxis::make(kMay1 - 1800, 3600, 7);  // 23:30 .. 05:30
  const Observations obs = readObservations(path, shifted);
  const auto& g1 = obs.values.at("G1");
  ASSERT_EQ(g1.size(), 7u);
  EXPECT_TRUE(std::isnan(g1[0]));  // before the record: never held
  EXPECT_DOUBLE_EQ(g1[1], 15);     // 00:30, between 10 and 20
  EXPECT_TRUE(std::isnan(g1[2]));  // 01:30: 02:00 is missing (NA)
  EXPECT_TRUE(std::isnan(g1[3]));  // 02:30
  EXPECT_DOUBLE_EQ(g1[4], 45);     // 03:30
  EXPECT_TRUE(std::isnan(g1[5]));  // 04:30: past the record
  const auto& g2 = obs.values.at("G2");
  EXPECT_TRUE(std::isnan(g2[1]));  // the empty cell at 01:00
  EXPECT_DOUBLE_EQ(g2[3], 3.5);
  EXPECT_TRUE(obs.warnings.empty());

  const auto finer = routing::TimeAxis::make(kMay1, 1800, 10);  // 00:00 .. 04:30
  const Observations on_finer = readObservations(path, finer);
  const auto& h1 = on_finer.values.at("G1");
  EXPECT_DOUBLE_EQ(h1[0], 10);
  EXPECT_TRUE(std::isnan(h1[1]));  // 00:30: the hours around it are two steps apart
  EXPECT_DOUBLE_EQ(h1[2], 20);
  EXPECT_TRUE(std::isnan(h1[4]));  // 02:00 missing
  EXPECT_DOUBLE_EQ(h1[6], 40);
  EXPECT_DOUBLE_EQ(h1[8], 50);
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
