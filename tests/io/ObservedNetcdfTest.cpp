// Observed discharges from a NetCDF file (docs/formats.md, "Observed
// hydrographs"): the same record as the hourly CSV of ObservedTest, written
// here with netCDF-C directly, gives the same values on the run's axis.
#include <gtest/gtest.h>

#include <netcdf.h>

#include <cmath>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/Observed.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

// 2026-05-01T00:00:00Z, seconds since the epoch (from `date -u -d ... +%s`).
constexpr std::int64_t kMay1 = 1777593600;
constexpr double kFill = -9999;

struct File {
  std::string station = "reach";            ///< "reach" or "gauge"
  std::vector<std::string> ids;
  std::vector<double> hours;                ///< since 2026-05-01
  std::vector<std::vector<double>> values;  ///< per station, per time
  std::string units = "m3 s-1";
  std::string variable = "discharge";
  bool time_first = true;
};

void put(int nc, int var, const char* name, const std::string& text) {
  nc_put_att_text(nc, var, name, text.size(), text.c_str());
}

void write(const fs::path& path, const File& f) {
  int nc = 0, dt = 0, ds = 0, vt = 0, vid = 0, vq = 0;
  ASSERT_EQ(nc_create(path.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc), NC_NOERR);
  nc_def_dim(nc, "time", f.hours.size(), &dt);
  nc_def_dim(nc, f.station.c_str(), f.ids.size(), &ds);
  nc_def_var(nc, "time", NC_DOUBLE, 1, &dt, &vt);
  put(nc, vt, "units", "hours since 2026-05-01");
  nc_def_var(nc, (f.station + "_id").c_str(), NC_STRING, 1, &ds, &vid);
  const int dims[2] = {f.time_first ? dt : ds, f.time_first ? ds : dt};
  nc_def_var(nc, f.variable.c_str(), NC_DOUBLE, 2, dims, &vq);
  nc_put_att_double(nc, vq, "_FillValue", NC_DOUBLE, 1, &kFill);
  put(nc, vq, "units", f.units);
  ASSERT_EQ(nc_enddef(nc), NC_NOERR);
  nc_put_var_double(nc, vt, f.hours.data());
  std::vector<const char*> ids;
  for (const auto& id : f.ids) ids.push_back(id.c_str());
  nc_put_var_string(nc, vid, ids.data());
  std::vector<double> flat;
  if (f.time_first) {
    for (std::size_t k = 0; k < f.hours.size(); ++k)
      for (const auto& s : f.values) flat.push_back(s[k]);
  } else {
    for (const auto& s : f.values) flat.insert(flat.end(), s.begin(), s.end());
  }
  ASSERT_EQ(nc_put_var_double(nc, vq, flat.data()), NC_NOERR);
  ASSERT_EQ(nc_close(nc), NC_NOERR);
}

std::string message(const fs::path& path, const routing::TimeAxis& axis) {
  try {
    readObservations(path, axis);
  } catch (const InputError& e) {
    return e.what();
  }
  return "no error";
}

}  // namespace

// The record of ObservedTest.HourlyRecordOnShiftedAndFinerAxes, with the
// missing values as _FillValue (G1 at 02:00) and NaN (G2 at 01:00): the
// expected values are the same hand-computed means (linear interpolation).
TEST(ObservedNetcdf, ReadsTheRecordAsTheCsvIsRead) {
  const testsupport::TempDir tmp;
  const fs::path path = tmp.path() / "obs.nc";
  File f;
  f.ids = {"G1", "G2"};
  f.hours = {0, 1, 2, 3, 4};
  f.values = {{10, 20, kFill, 40, 50}, {1, std::nan(""), 3, 4, 5}};
  write(path, f);
  const auto shifted = routing::TimeAxis::make(kMay1 - 1800, 3600, 7);  // 23:30 .. 05:30
  const Observations obs = readObservations(path, shifted);
  EXPECT_EQ(obs.file, path.string());
  const auto& g1 = obs.values.at("G1");
  ASSERT_EQ(g1.size(), 7u);
  EXPECT_TRUE(std::isnan(g1[0]));  // before the record
  EXPECT_DOUBLE_EQ(g1[1], 15);     // 00:30, between 10 and 20
  EXPECT_TRUE(std::isnan(g1[2]));  // 01:30: 02:00 is missing (_FillValue)
  EXPECT_TRUE(std::isnan(g1[3]));
  EXPECT_DOUBLE_EQ(g1[4], 45);     // 03:30
  EXPECT_TRUE(std::isnan(g1[5]));  // past the record
  const auto& g2 = obs.values.at("G2");
  EXPECT_TRUE(std::isnan(g2[1]));  // NaN at 01:00
  EXPECT_DOUBLE_EQ(g2[3], 3.5);
  EXPECT_TRUE(obs.warnings.empty());
}

// Gauge-keyed, (gauge, time) order, ft3 s-1 and uneven times: converted
// with 1 ft = 0.3048 m exactly (international foot), so 1 ft3/s =
// 0.028316846592 m3/s; a station without any value is kept and warned of.
TEST(ObservedNetcdf, GaugeKeyedStationFirstInFeet) {
  const testsupport::TempDir tmp;
  const fs::path path = tmp.path() / "obs.nc";
  File f;
  f.station = "gauge";
  f.ids = {"Weir-A", "Weir-B"};
  f.hours = {0, 0.5, 2};
  f.values = {{100, 200, 300}, {kFill, kFill, kFill}};
  f.units = "ft3 s-1";
  f.time_first = false;
  write(path, f);
  const auto axis = routing::TimeAxis::make(kMay1, 1800, 5);
  const Observations obs = readObservations(path, axis);
  const double ft3 = 0.3048 * 0.3048 * 0.3048;
  const auto& a = obs.values.at("Weir-A");
  EXPECT_NEAR(a[0], 100 * ft3, 1e-12);  // 1e-12: rounding of the product only
  EXPECT_NEAR(a[1], 200 * ft3, 1e-12);
  EXPECT_TRUE(std::isnan(a[2]));  // 01:00: the observations around it are 1.5 h apart, coarser than the step
  EXPECT_NEAR(a[4], 300 * ft3, 1e-12);
  ASSERT_TRUE(obs.values.contains("Weir-B"));
  ASSERT_EQ(obs.warnings.size(), 1u);
  EXPECT_NE(obs.warnings[0].find("Weir-B"), std::string::npos) << obs.warnings[0];
}

TEST(ObservedNetcdf, BadFilesAreRefusedNamingWhatIsWrong) {
  const testsupport::TempDir tmp;
  const auto axis = routing::TimeAxis::make(kMay1, 3600, 3);
  File f;
  f.ids = {"G1"};
  f.hours = {0, 1, 2};
  f.values = {{1, -2, 3}};
  const fs::path negative = tmp.path() / "negative.nc";
  write(negative, f);
  std::string m = message(negative, axis);
  EXPECT_NE(m.find("negative.nc"), std::string::npos) << m;
  EXPECT_NE(m.find("G1"), std::string::npos) << m;
  EXPECT_NE(m.find("2026-05-01T01:00:00"), std::string::npos) << m;

  f.values = {{1, 2, 3}};
  f.variable = "flow";
  const fs::path unnamed = tmp.path() / "unnamed.nc";
  write(unnamed, f);
  m = message(unnamed, axis);
  EXPECT_NE(m.find("discharge"), std::string::npos) << m;

  f.variable = "discharge";
  f.units = "mm";
  const fs::path depth = tmp.path() / "depth.nc";
  write(depth, f);
  m = message(depth, axis);
  EXPECT_NE(m.find("not a discharge"), std::string::npos) << m;

  f.units = "m3 s-1";
  f.ids = {"G1", "G1"};
  f.values = {{1, 2, 3}, {1, 2, 3}};
  const fs::path repeated = tmp.path() / "repeated.nc";
  write(repeated, f);
  m = message(repeated, axis);
  EXPECT_NE(m.find("appears twice"), std::string::npos) << m;

  f.ids = {"G1"};
  f.values = {{1, 2, 3}};
  f.hours = {0, 2, 1};
  const fs::path backwards = tmp.path() / "backwards.nc";
  write(backwards, f);
  m = message(backwards, axis);
  EXPECT_NE(m.find("does not come after"), std::string::npos) << m;
}
