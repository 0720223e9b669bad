// Crafted NetCDF forcing and observation files, made here with the
// netCDF-C API: variables whose shape is not the documented one (a `time`
// or an id variable along another, longer dimension, ...), time axes that
// are not numbers, lie outside the years an axis may cover, or step by
// less than a millisecond, and dimensions far too long to read. Each must
// be an InputError naming the file and the variable, never a read beyond
// a buffer (docs/formats.md, "NetCDF layout").
#include "support/Scratch.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"

#include <netcdf.h>

#include <cmath>
#include <functional>
#include <algorithm>
#include <limits>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

/// One variable of a crafted file: its dimensions by name, type, the
/// attributes given, and values to write (doubles, or ids as text).
struct Var {
  std::string name;
  nc_type type = NC_DOUBLE;
  std::vector<std::string> dims;
  std::vector<std::pair<std::string, std::string>> text_atts;
  std::vector<double> values;            ///< written when not empty
  std::vector<std::string> ids;          ///< NC_STRING / NC_CHAR values, written when not empty
};

struct File {
  std::vector<std::pair<std::string, std::size_t>> dims;
  std::vector<Var> vars;
};

void write(const fs::path& p, const File& f) {
  int nc = 0;
  ASSERT_EQ(nc_create(p.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc), NC_NOERR);
  std::map<std::string, int> dim;
  for (const auto& [name, len] : f.dims) ASSERT_EQ(nc_def_dim(nc, name.c_str(), len, &dim[name]), NC_NOERR) << name;
  std::vector<int> ids;
  for (const Var& v : f.vars) {
    std::vector<int> d;
    for (const auto& n : v.dims) d.push_back(dim.at(n));
    int id = 0;
    ASSERT_EQ(nc_def_var(nc, v.name.c_str(), v.type, static_cast<int>(d.size()), d.data(), &id), NC_NOERR) << v.name;
    if (!d.empty()) {  // chunked, so that a huge dimension takes no room until written
      std::vector<std::size_t> chunks;
      for (const auto& n : v.dims)
        for (const auto& [name, len] : f.dims)
          if (name == n) chunks.push_back(std::max<std::size_t>(1, std::min<std::size_t>(len, 1024)));
      ASSERT_EQ(nc_def_var_chunking(nc, id, NC_CHUNKED, chunks.data()), NC_NOERR) << v.name;
    }
    for (const auto& [a, t] : v.text_atts) nc_put_att_text(nc, id, a.c_str(), t.size(), t.c_str());
    ids.push_back(id);
  }
  ASSERT_EQ(nc_enddef(nc), NC_NOERR);
  for (std::size_t i = 0; i < f.vars.size(); ++i) {
    const Var& v = f.vars[i];
    if (!v.values.empty()) {
      ASSERT_EQ(nc_put_var_double(nc, ids[i], v.values.data()), NC_NOERR) << v.name;
    }
    if (!v.ids.empty() && v.type == NC_STRING) {
      std::vector<const char*> texts;
      for (const auto& s : v.ids) texts.push_back(s.c_str());
      ASSERT_EQ(nc_put_var_string(nc, ids[i], texts.data()), NC_NOERR) << v.name;
    } else if (!v.ids.empty()) {
      std::string text;
      for (const auto& s : v.ids) text += s;  // each padded to the id length by the caller
      ASSERT_EQ(nc_put_var_text(nc, ids[i], text.data()), NC_NOERR) << v.name;
    }
  }
  ASSERT_EQ(nc_close(nc), NC_NOERR);
}

const std::pair<std::string, std::string> kHours{"units", "hours since 2026-05-01T00:00:00Z"};
const std::pair<std::string, std::string> kDischarge{"units", "m3 s-1"};

/// A valid forcing file: 3 hourly times, 2 reaches, `lateral` (time, reach).
File validForcing() {
  File f;
  f.dims = {{"time", 3}, {"reach", 2}};
  f.vars.push_back({"time", NC_DOUBLE, {"time"}, {kHours}, {0, 1, 2}, {}});
  f.vars.push_back({"reach_id", NC_STRING, {"reach"}, {}, {}, {"A", "B"}});
  f.vars.push_back({"lateral", NC_DOUBLE, {"time", "reach"}, {kDischarge}, {1, 2, 3, 4, 5, 6}, {}});
  return f;
}

Var& var(File& f, const std::string& name) {
  for (Var& v : f.vars)
    if (v.name == name) return v;
  throw std::logic_error("no variable " + name);
}

/// Expects `read` to throw an InputError naming `file`, the field `field`
/// (when given) and containing `says`.
void expectRefused(const std::function<void()>& read, const fs::path& file, const std::string& field,
                   const std::string& says) {
  try {
    read();
    ADD_FAILURE() << file << ": no InputError (expected one saying '" << says << "')";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, file.string()) << e.what();
    if (!field.empty()) {
      EXPECT_EQ(e.where().field, field) << e.what();
    }
    EXPECT_NE(std::string(e.what()).find(says), std::string::npos) << e.what();
  }
}

class NetcdfHostileTest : public ::testing::Test {
protected:
  fs::path make(const std::string& name, const File& f) {
    const fs::path p = tmp_.path() / name;
    write(p, f);
    return p;
  }
  void forcingRefused(const std::string& name, const File& f, const std::string& field, const std::string& says,
                      std::size_t max_steps = kDefaultMaxSteps) {
    const fs::path p = make(name, f);
    expectRefused([&] { NetcdfForcingSource source(p, max_steps); }, p, field, says);
  }
  testsupport::TempDir tmp_;
};

TEST_F(NetcdfHostileTest, ValidFileReads) {
  // The baseline the crafted files depart from reads as written.
  const fs::path p = make("valid.nc", validForcing());
  const NetcdfForcingSource source(p);
  EXPECT_EQ(source.axis().steps, 3u);
  EXPECT_EQ(source.axis().dt_s, 3600.0);
  std::vector<double> q;
  ASSERT_TRUE(source.series(ForcingKind::Lateral, "B", q));
  EXPECT_EQ(q, (std::vector<double>{2, 4, 6}));
}

TEST_F(NetcdfHostileTest, TimeAlongALongerDimensionIsRefused) {
  // `time` (the variable) on a dimension of 1000 while the dimension `time`
  // has 3: a buffer sized from the dimension would take 1000 values.
  File f = validForcing();
  f.dims.push_back({"other", 1000});
  var(f, "time").dims = {"other"};
  var(f, "time").values.assign(1000, 0.0);
  for (std::size_t k = 0; k < 1000; ++k) var(f, "time").values[k] = static_cast<double>(k);
  forcingRefused("time_other.nc", f, "time", "on the dimension 'time'");
}

TEST_F(NetcdfHostileTest, TimeOfTwoDimensionsIsRefused) {
  File f = validForcing();
  var(f, "time").dims = {"time", "reach"};
  var(f, "time").values = {0, 0, 1, 1, 2, 2};
  forcingRefused("time_2d.nc", f, "time", "one-dimensional");
}

TEST_F(NetcdfHostileTest, ReachIdsAlongALongerDimensionAreRefused) {
  // NC_STRING ids on a dimension of 500 while `reach` has 2.
  File f = validForcing();
  f.dims.push_back({"other", 500});
  var(f, "reach_id").dims = {"other"};
  var(f, "reach_id").ids.clear();
  for (int r = 0; r < 500; ++r) var(f, "reach_id").ids.push_back("R" + std::to_string(r));
  forcingRefused("ids_other.nc", f, "reach_id", "does not run along the dimension 'reach'");

  // A char array (other, 8): the same overrun through nc_get_var_text.
  File g = validForcing();
  g.dims.push_back({"other", 500});
  g.dims.push_back({"id_len", 8});
  Var& ids = var(g, "reach_id");
  ids.type = NC_CHAR;
  ids.dims = {"other", "id_len"};
  ids.ids.clear();
  for (int r = 0; r < 500; ++r) {
    std::string id = "R" + std::to_string(r);
    id.resize(8, '\0');
    ids.ids.push_back(id);
  }
  forcingRefused("char_ids_other.nc", g, "reach_id", "does not run along the dimension 'reach'");

  // A char array whose second dimension is `reach`.
  File h = validForcing();
  h.dims.push_back({"id_len", 8});
  Var& swapped = var(h, "reach_id");
  swapped.type = NC_CHAR;
  swapped.dims = {"id_len", "reach"};
  swapped.ids = {std::string(16, 'x')};
  forcingRefused("char_ids_swapped.nc", h, "reach_id", "does not run along the dimension 'reach'");
}

TEST_F(NetcdfHostileTest, ReachIdsOfAnotherShapeAreRefused) {
  File f = validForcing();
  var(f, "reach_id").type = NC_INT;
  var(f, "reach_id").ids.clear();
  var(f, "reach_id").values = {1, 2};
  forcingRefused("int_ids.nc", f, "reach_id", "must be strings");
}

TEST_F(NetcdfHostileTest, DischargeOnOtherDimensionsIsRefused) {
  File f = validForcing();
  f.dims.push_back({"other", 2});
  var(f, "lateral").dims = {"time", "other"};
  forcingRefused("lateral_other.nc", f, "lateral", "dimensions (time, reach)");
  File g = validForcing();
  var(g, "lateral").dims = {"time"};
  var(g, "lateral").values = {1, 2, 3};
  forcingRefused("lateral_1d.nc", g, "lateral", "dimensions (time, reach)");
}

TEST_F(NetcdfHostileTest, TimesThatAreNotFiniteOrOutOfRangeAreRefused) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  // The years an axis may cover are 1678-2261 (routing/TimeAxis.hpp).
  const struct {
    const char* name;
    std::vector<double> hours;
    std::string units;
    const char* says;
  } cases[] = {
      {"nan.nc", {nan, 1, 2}, "hours since 2026-05-01", "not a finite number"},
      {"inf.nc", {0, 1, INFINITY}, "hours since 2026-05-01", "not a finite number"},
      // An offset of 1e30 hours: 3.6e33 s, far beyond any year.
      {"offset_1e30.nc", {1e30, 1e30 + 1, 1e30 + 2}, "hours since 2026-05-01", "outside the years"},
      // A step of 1e300 s.
      {"step_1e300.nc", {0, 1e300, 2e300}, "seconds since 2026-05-01", "outside the years"},
      // Times near 9e18 s, near the int64 limit of seconds (9.22e18).
      {"near_int64.nc", {9e18, 9e18 + 3600, 9e18 + 7200}, "seconds since 1970-01-01", "outside the years"},
      {"negative.nc", {-1e19, -1e19 + 3600, -1e19 + 7200}, "seconds since 1970-01-01", "outside the years"},
      // Days since year 1 reach 2026 fine, but 1e7 days do not.
      {"days.nc", {1e7, 1e7 + 1, 1e7 + 2}, "days since 2026-05-01", "outside the years"},
  };
  for (const auto& c : cases) {
    File f = validForcing();
    var(f, "time").values = c.hours;
    var(f, "time").text_atts = {{"units", c.units}};
    forcingRefused(c.name, f, "time", c.says);
  }
}

TEST_F(NetcdfHostileTest, SubMillisecondStepIsRefusedAtTheTimeVariable) {
  // A step of 0.1 ms is below the shortest step (1 ms: outputs write times
  // to the millisecond); it is refused at `time`, not rounded to 0.
  File f = validForcing();
  var(f, "time").values = {0, 0.0001, 0.0002};
  var(f, "time").text_atts = {{"units", "seconds since 2026-05-01T00:00:00Z"}};
  forcingRefused("step_0.1ms.nc", f, "time", "shorter than the shortest time step");
}

TEST_F(NetcdfHostileTest, MillisecondStepIsKeptNotRoundedToZero) {
  // A step of 1 ms is allowed and kept: 0.001 s, not rounded to a whole
  // second (which gave 0).
  File f = validForcing();
  var(f, "time").values = {0, 0.001, 0.002};
  var(f, "time").text_atts = {{"units", "seconds since 2026-05-01T00:00:00Z"}};
  const fs::path p = make("step_1ms.nc", f);
  const NetcdfForcingSource source(p);
  EXPECT_NEAR(source.axis().dt_s, 0.001, 1e-12);  // exact up to the rounding of 0.001 in binary
  EXPECT_EQ(source.axis().steps, 3u);
}

TEST_F(NetcdfHostileTest, PackedTimesAreRefused) {
  File f = validForcing();
  var(f, "time").text_atts.push_back({"add_offset", "1"});
  forcingRefused("packed_time.nc", f, "time", "add_offset");
}

TEST_F(NetcdfHostileTest, TextTimesAreRefused) {
  File f = validForcing();
  f.dims.push_back({"len", 4});
  var(f, "time").type = NC_CHAR;
  var(f, "time").dims = {"time"};
  var(f, "time").values.clear();
  var(f, "time").ids = {"abc"};
  forcingRefused("text_time.nc", f, "time", "must be numbers");
}

TEST_F(NetcdfHostileTest, MoreTimesThanAllowedAreRefusedSayingHowToAllowThem) {
  File f = validForcing();
  f.dims[0].second = 12;
  var(f, "time").values.resize(12);
  for (std::size_t k = 0; k < 12; ++k) var(f, "time").values[k] = static_cast<double>(k);
  var(f, "lateral").values.assign(24, 1.0);
  forcingRefused("twelve.nc", f, "time", "--max-steps 12", 10);
  const fs::path p = tmp_.path() / "twelve.nc";
  EXPECT_EQ(NetcdfForcingSource(p, 12).axis().steps, 12u);  // allowed when asked
}

TEST_F(NetcdfHostileTest, HugeDimensionsAreRefusedBeforeAnythingIsRead) {
  // A `time` of 2^40 steps (never written: the file stays small) would need
  // 8 TiB to read; a `reach` of 2^40 ids likewise.
  const std::size_t huge = std::size_t{1} << 40;
  File f = validForcing();
  f.dims[0].second = huge;
  var(f, "time").values.clear();
  var(f, "lateral").values.clear();
  forcingRefused("huge_time.nc", f, "time", "more than the 1000000 allowed");

  File g = validForcing();
  g.dims[1].second = huge;
  var(g, "reach_id").ids.clear();
  var(g, "lateral").values.clear();
  forcingRefused("huge_reach.nc", g, "reach_id", "more than this program reads");
}

// ---- observations (readObservedNetcdf shares the checks) ----

File validObserved() {
  File f;
  f.dims = {{"time", 3}, {"gauge", 2}};
  f.vars.push_back({"time", NC_DOUBLE, {"time"}, {kHours}, {0, 1, 2}, {}});
  f.vars.push_back({"gauge_id", NC_STRING, {"gauge"}, {}, {}, {"G1", "G2"}});
  f.vars.push_back({"discharge", NC_DOUBLE, {"time", "gauge"}, {kDischarge}, {1, 2, 3, 4, 5, 6}, {}});
  return f;
}

TEST_F(NetcdfHostileTest, ObservedBaselineReads) {
  const fs::path p = make("observed.nc", validObserved());
  const RawForcing raw = readObservedNetcdf(p);
  ASSERT_EQ(raw.series.size(), 2u);
  EXPECT_EQ(raw.series.at("G2").q_m3s, (std::vector<double>{2, 4, 6}));
}

TEST_F(NetcdfHostileTest, ObservedOfHostileShapeIsRefused) {
  File f = validObserved();
  f.dims.push_back({"other", 1000});
  var(f, "time").dims = {"other"};
  var(f, "time").values.resize(1000);
  for (std::size_t k = 0; k < 1000; ++k) var(f, "time").values[k] = static_cast<double>(k);
  fs::path p = make("obs_time_other.nc", f);
  expectRefused([&] { readObservedNetcdf(p); }, p, "time", "on the dimension 'time'");

  File g = validObserved();
  g.dims.push_back({"other", 500});
  var(g, "gauge_id").dims = {"other"};
  var(g, "gauge_id").ids.clear();
  for (int r = 0; r < 500; ++r) var(g, "gauge_id").ids.push_back("G" + std::to_string(r));
  p = make("obs_ids_other.nc", g);
  expectRefused([&] { readObservedNetcdf(p); }, p, "gauge_id", "does not run along the dimension 'gauge'");

  File h = validObserved();
  var(h, "time").values = {0, 9e18, 9.1e18};
  var(h, "time").text_atts = {{"units", "seconds since 1970-01-01"}};
  p = make("obs_far.nc", h);
  expectRefused([&] { readObservedNetcdf(p); }, p, "time", "outside the years");

  // A UTC offset of 1e30 minutes (was converted to int: undefined).
  File o = validObserved();
  o.vars[0].text_atts.clear();
  p = make("obs_offset.nc", o);
  {
    int nc = 0, var = 0;
    ASSERT_EQ(nc_open(p.c_str(), NC_WRITE, &nc), NC_NOERR);
    ASSERT_EQ(nc_inq_varid(nc, "time", &var), NC_NOERR);
    nc_redef(nc);
    const std::string units = "hours since 2026-05-01T00:00:00Z";
    nc_put_att_text(nc, var, "units", units.size(), units.c_str());
    const double offset = 1e30;
    nc_put_att_double(nc, var, "utc_offset_minutes", NC_DOUBLE, 1, &offset);
    ASSERT_EQ(nc_close(nc), NC_NOERR);
  }
  expectRefused([&] { readObservedNetcdf(p); }, p, "time", "utc_offset");

  File n = validObserved();
  var(n, "time").values = {0, std::numeric_limits<double>::quiet_NaN(), 2};
  p = make("obs_nan.nc", n);
  expectRefused([&] { readObservedNetcdf(p); }, p, "time", "not a finite number");
}

}  // namespace
