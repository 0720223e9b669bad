// The saved-state file (io::writeStateFile, io::readStateFile): the
// variables and attributes docs/formats.md ("Saved state") lists, read
// back with the netCDF C library itself, and files damaged or made by
// hand refused with the file, the variable and the reach named.
#include "reachwise/io/SavedState.hpp"

#include <gtest/gtest.h>
#include <netcdf.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "support/Scratch.hpp"
#include "support/Errors.hpp"

using namespace reachwise;

namespace {

/// Two reaches (R1 by vpmc on 3 sub-reaches, R2 dry) and a lake.
io::SavedState sample() {
  io::SavedState st;
  st.method = "vpmc";
  st.time_unix_s = 1777723200;  // 2026-05-02T12:00:00Z
  st.dt_s = 3600;
  st.reach_ids = {"R1", "R2"};
  routing::ReachState r1;
  r1.method = routing::Method::VariableParameter;
  r1.subreaches = 3;
  r1.substeps = 2;
  r1.reference_q_m3s = 42.5;
  r1.table_min_q_m3s = 0.5;
  r1.table_max_q_m3s = 150;
  r1.table_nodes = 40;
  r1.q_m3s = {10.0, 11.5, 12.25, 13.125};
  r1.storage_m3 = 123456.5;
  routing::ReachState r2;
  r2.method = routing::Method::VariableParameter;
  r2.reference_q_m3s = 0;
  st.reaches = {r1, r2};
  st.lakes = {{"L1", 5.5e5, 101.25, 4}};
  return st;
}

void write(const std::filesystem::path& path, const io::SavedState& st) {
  io::OutputCommit all(true);
  io::writeStateFile(path, st, {"reachwise test", "a test"}, all);
  all.commit();
}

std::string textAtt(int nc, int var, const char* name) {
  std::size_t len = 0;
  if (nc_inq_attlen(nc, var, name, &len) != NC_NOERR) return "<missing>";
  std::string s(len, '\0');
  nc_get_att_text(nc, var, name, s.data());
  return s;
}

using testsupport::contains;
using testsupport::errorOf;

}  // namespace

// The layout as docs/formats.md gives it, read with the netCDF library.
TEST(SavedStateFile, HasTheDocumentedVariablesAndAttributes) {
  testsupport::TempDir dir;
  const auto path = dir.path() / "state.nc";
  write(path, sample());
  int nc = -1;
  ASSERT_EQ(nc_open(path.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "Conventions"), "CF-1.8");
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "method"), "vpmc");
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "end_time"), "2026-05-02T12:00:00Z");
  EXPECT_NE(textAtt(nc, NC_GLOBAL, "comment"), "<missing>");  // the caution
  int version = 0;
  EXPECT_EQ(nc_get_att_int(nc, NC_GLOBAL, "reachwise_state_version", &version), NC_NOERR);
  EXPECT_EQ(version, io::kStateFormatVersion);
  double dt = 0;
  EXPECT_EQ(nc_get_att_double(nc, NC_GLOBAL, "time_step_s", &dt), NC_NOERR);
  EXPECT_EQ(dt, 3600);
  const auto dim = [&](const char* name) {
    int d = -1;
    std::size_t len = 0;
    EXPECT_EQ(nc_inq_dimid(nc, name, &d), NC_NOERR) << name;
    nc_inq_dimlen(nc, d, &len);
    return len;
  };
  EXPECT_EQ(dim("time"), 1u);
  EXPECT_EQ(dim("reach"), 2u);
  EXPECT_EQ(dim("point"), 4u);  // 3 + 1 section flows of R1, none of the dry R2
  EXPECT_EQ(dim("lake"), 1u);
  const auto var = [&](const char* name) {
    int v = -1;
    EXPECT_EQ(nc_inq_varid(nc, name, &v), NC_NOERR) << name;
    return v;
  };
  const int time = var("time");
  EXPECT_EQ(textAtt(nc, time, "units"), "seconds since 1970-01-01T00:00:00Z");
  EXPECT_EQ(textAtt(nc, time, "standard_name"), "time");
  double t = 0;
  nc_get_var_double(nc, time, &t);
  EXPECT_EQ(t, 1777723200.0);
  char* ids[2] = {nullptr, nullptr};
  ASSERT_EQ(nc_get_var_string(nc, var("reach_id"), ids), NC_NOERR);
  EXPECT_STREQ(ids[0], "R1");
  EXPECT_STREQ(ids[1], "R2");
  nc_free_string(2, ids);
  EXPECT_EQ(textAtt(nc, var("reach_id"), "cf_role"), "timeseries_id");
  const int count = var("point_count");
  EXPECT_EQ(textAtt(nc, count, "sample_dimension"), "point");  // CF contiguous ragged array
  int counts[2] = {};
  nc_get_var_int(nc, count, counts);
  EXPECT_EQ(counts[0], 4);
  EXPECT_EQ(counts[1], 0);
  int m[2] = {}, k[2] = {}, nodes[2] = {};
  nc_get_var_int(nc, var("subreaches"), m);
  nc_get_var_int(nc, var("substeps"), k);
  nc_get_var_int(nc, var("table_nodes"), nodes);
  EXPECT_EQ(m[0], 3);
  EXPECT_EQ(k[0], 2);
  EXPECT_EQ(nodes[0], 40);
  EXPECT_EQ(m[1], 0);
  double q[4] = {};
  const int discharge = var("discharge");
  EXPECT_EQ(textAtt(nc, discharge, "units"), "m3 s-1");
  nc_get_var_double(nc, discharge, q);
  EXPECT_EQ(q[0], 10.0);
  EXPECT_EQ(q[3], 13.125);
  for (const char* name : {"reach_method", "reference_discharge", "table_min_discharge", "table_max_discharge",
                           "reach_storage", "lake_id", "lake_storage", "lake_level", "lake_substeps"})
    var(name);
  double s = 0;
  nc_get_var_double(nc, var("lake_storage"), &s);
  EXPECT_EQ(s, 5.5e5);
  nc_close(nc);

  // Read back: the same state.
  const io::SavedState back = io::readStateFile(path);
  const io::SavedState st = sample();
  EXPECT_EQ(back.method, st.method);
  EXPECT_EQ(back.time_unix_s, st.time_unix_s);
  EXPECT_EQ(back.dt_s, st.dt_s);
  EXPECT_EQ(back.reach_ids, st.reach_ids);
  ASSERT_EQ(back.reaches.size(), 2u);
  EXPECT_EQ(back.reaches[0].q_m3s, st.reaches[0].q_m3s);
  EXPECT_EQ(back.reaches[0].table_max_q_m3s, 150);
  EXPECT_EQ(back.reaches[0].reference_q_m3s, 42.5);
  EXPECT_EQ(back.reaches[1].subreaches, 0u);
  ASSERT_EQ(back.lakes.size(), 1u);
  EXPECT_EQ(back.lakes[0].lake_id, "L1");
  EXPECT_EQ(back.lakes[0].substeps, 4u);
}

// A file changed after writing, or not a state at all: refused, naming
// the file, the variable and (where it applies) the reach.
TEST(SavedStateFile, DamagedFilesAreRefused) {
  testsupport::TempDir dir;
  const auto path = dir.path() / "state.nc";
  const std::string file = path.string();
  // Edits one written file with the netCDF library, then reads it.
  const auto damaged = [&](const std::function<void(int nc)>& edit) {
    write(path, sample());
    int nc = -1;
    EXPECT_EQ(nc_open(path.c_str(), NC_WRITE, &nc), NC_NOERR);
    edit(nc);
    nc_close(nc);
    return errorOf([&] { io::readStateFile(path); });
  };
  const auto varid = [](int nc, const char* name) {
    int v = -1;
    nc_inq_varid(nc, name, &v);
    return v;
  };
  // A flow NaN.
  std::string e = damaged([&](int nc) {
    const std::size_t at = 2;
    const double nan = std::nan("");
    nc_put_var1_double(nc, varid(nc, "discharge"), &at, &nan);
  });
  EXPECT_TRUE(contains(e, file) && contains(e, "discharge") && contains(e, "R1") && contains(e, "not finite")) << e;
  // A count that does not fit the sub-reaches.
  e = damaged([&](int nc) {
    const std::size_t at = 0;
    const int three = 3;
    nc_put_var1_int(nc, varid(nc, "point_count"), &at, &three);
  });
  EXPECT_TRUE(contains(e, file) && contains(e, "point_count") && contains(e, "R1")) << e;
  // A negative lake storage.
  e = damaged([&](int nc) {
    const std::size_t at = 0;
    const double minus = -5;
    nc_put_var1_double(nc, varid(nc, "lake_storage"), &at, &minus);
  });
  EXPECT_TRUE(contains(e, "lake_storage") && contains(e, "L1")) << e;
  // Another version.
  e = damaged([&](int nc) {
    nc_redef(nc);
    const int two = 2;
    nc_put_att_int(nc, NC_GLOBAL, "reachwise_state_version", NC_INT, 1, &two);
    nc_enddef(nc);
  });
  EXPECT_TRUE(contains(e, "reachwise_state_version") && contains(e, "is 2")) << e;
  // An unknown method for a reach.
  e = damaged([&](int nc) {
    const std::size_t at = 0;
    const char* text = "diffusion";
    nc_put_var1_string(nc, varid(nc, "reach_method"), &at, &text);
  });
  EXPECT_TRUE(contains(e, "reach_method") && contains(e, "R1") && contains(e, "diffusion")) << e;

  // Made by hand: discharge on the reach dimension (a wrong shape).
  const auto crafted = dir.path() / "crafted.nc";
  {
    int nc = -1, d_time = 0, d_reach = 0, d_point = 0, v = 0;
    ASSERT_EQ(nc_create(crafted.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc), NC_NOERR);
    const int version = 1;
    nc_put_att_int(nc, NC_GLOBAL, "reachwise_state_version", NC_INT, 1, &version);
    nc_put_att_text(nc, NC_GLOBAL, "method", 2, "mc");
    const double dt = 3600;
    nc_put_att_double(nc, NC_GLOBAL, "time_step_s", NC_DOUBLE, 1, &dt);
    nc_def_dim(nc, "time", 1, &d_time);
    nc_def_dim(nc, "reach", 1, &d_reach);
    nc_def_dim(nc, "point", 2, &d_point);
    nc_def_var(nc, "time", NC_DOUBLE, 1, &d_time, &v);
    const std::string units = "seconds since 1970-01-01T00:00:00Z";
    nc_put_att_text(nc, v, "units", units.size(), units.c_str());
    nc_def_var(nc, "reach_id", NC_STRING, 1, &d_reach, &v);
    nc_def_var(nc, "reach_method", NC_STRING, 1, &d_reach, &v);
    for (const char* name : {"subreaches", "substeps", "table_nodes", "point_count"})
      nc_def_var(nc, name, NC_INT, 1, &d_reach, &v);
    for (const char* name : {"reference_discharge", "table_min_discharge", "table_max_discharge", "reach_storage",
                             "discharge"})
      nc_def_var(nc, name, NC_DOUBLE, 1, &d_reach, &v);
    nc_close(nc);
  }
  e = errorOf([&] { io::readStateFile(crafted); });
  EXPECT_TRUE(contains(e, crafted.string()) && contains(e, "discharge") && contains(e, "(point)")) << e;

  // Not NetCDF at all; no file.
  {
    std::ofstream text(dir.path() / "text.nc");
    text << "time,R1\n2026-05-02T12:00:00Z,3\n";
  }
  e = errorOf([&] { io::readStateFile(dir.path() / "text.nc"); });
  EXPECT_TRUE(contains(e, "text.nc") && contains(e, "NetCDF")) << e;
  e = errorOf([&] { io::readStateFile(dir.path() / "none.nc"); });
  EXPECT_TRUE(contains(e, "none.nc") && contains(e, "does not exist")) << e;
}
