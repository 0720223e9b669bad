#include "support/Scratch.hpp"
#include "reachwise/io/SeriesNetcdf.hpp"

#include <netcdf.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <cstdio>
#include <fstream>
#include <iterator>

#include <algorithm>
#include <numeric>
#include <random>

#include <fmt/format.h>
#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

class SeriesNetcdfTest : public ::testing::Test {
protected:
  void SetUp() override {
    axis_.start_unix_s = 1777593600;  // 2026-05-01T00:00:00Z (Python calendar.timegm)
    axis_.dt_s = 900;
    axis_.steps = 24;
  }
  std::size_t filesInDir() const {
    return static_cast<std::size_t>(std::distance(fs::directory_iterator(dir_), fs::directory_iterator()));
  }
  std::vector<std::string> ids(std::size_t n) const {
    std::vector<std::string> out;
    for (std::size_t i = 0; i < n; ++i) out.push_back(fmt::format("Brook-{}", i));
    return out;
  }
  testsupport::TempDir tmp_;
  const fs::path dir_ = tmp_.path();
  routing::TimeAxis axis_;
};

/// One reach's series read back with the netCDF-C API.
std::vector<double> column(int nc, const char* name, std::size_t reach, std::size_t steps) {
  int v = 0;
  EXPECT_EQ(nc_inq_varid(nc, name, &v), NC_NOERR) << name;
  std::vector<double> out(steps);
  const std::size_t start[2] = {0, reach};
  const std::size_t count[2] = {steps, 1};
  EXPECT_EQ(nc_get_vara_double(nc, v, start, count, out.data()), NC_NOERR);
  return out;
}

std::string textAtt(int nc, int varid, const char* name) {
  std::size_t len = 0;
  EXPECT_EQ(nc_inq_attlen(nc, varid, name, &len), NC_NOERR) << name;
  std::string s(len, '\0');
  nc_get_att_text(nc, varid, name, s.data());
  return s;
}

}  // namespace

TEST_F(SeriesNetcdfTest, RandomOrderRoundTrip) {
  const unsigned seed = 42;
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(0, 100);
  const std::size_t n = 57;
  std::vector<std::vector<double>> q(n), d(n), v(n);
  for (std::size_t r = 0; r < n; ++r)
    for (std::size_t k = 0; k < axis_.steps; ++k) {
      q[r].push_back(u(rng));
      d[r].push_back(u(rng) / 10);
      v[r].push_back(u(rng) / 50);
    }
  std::vector<std::uint32_t> order(n);
  std::iota(order.begin(), order.end(), 0u);
  std::shuffle(order.begin(), order.end(), rng);
  const fs::path p = dir_ / "hydrographs.nc";
  {
    SeriesNetcdfOptions options;
    options.source = "reachwise test";
    NetcdfSeriesWriter writer(p, axis_, ids(n), options);
    for (std::uint32_t r : order) writer.write(r, q[r], d[r], v[r]);
    EXPECT_FALSE(fs::exists(p));  // not before finish()
    writer.finish();
  }
  ASSERT_TRUE(fs::exists(p));
  EXPECT_EQ(filesInDir(), 1u);
  int nc = 0;
  ASSERT_EQ(nc_open(p.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  for (std::size_t r = 0; r < n; ++r) {
    EXPECT_EQ(column(nc, "outflow", r, axis_.steps), q[r]) << "reach " << r << " seed " << seed;
    EXPECT_EQ(column(nc, "depth", r, axis_.steps), d[r]) << "reach " << r;
    EXPECT_EQ(column(nc, "velocity", r, axis_.steps), v[r]) << "reach " << r;
  }
  int vid = 0;
  ASSERT_EQ(nc_inq_varid(nc, "reach_id", &vid), NC_NOERR);
  std::vector<char*> names(n);
  ASSERT_EQ(nc_get_var_string(nc, vid, names.data()), NC_NOERR);
  EXPECT_STREQ(names[0], "Brook-0");
  EXPECT_STREQ(names[n - 1], fmt::format("Brook-{}", n - 1).c_str());
  nc_free_string(n, names.data());
  // CF Conventions 1.8 §2.6.1, §4.4, §3.1 (attribute names and values).
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "Conventions"), "CF-1.8");
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "source"), "reachwise test");
  int vt = 0, vq = 0, vv = 0;
  nc_inq_varid(nc, "time", &vt);
  nc_inq_varid(nc, "outflow", &vq);
  nc_inq_varid(nc, "velocity", &vv);
  EXPECT_EQ(textAtt(nc, vt, "units"), "seconds since 1970-01-01T00:00:00Z");
  EXPECT_EQ(textAtt(nc, vt, "calendar"), "standard");
  EXPECT_EQ(textAtt(nc, vq, "units"), "m3 s-1");
  EXPECT_EQ(textAtt(nc, vv, "units"), "m s-1");
  std::vector<double> t(axis_.steps);
  nc_get_var_double(nc, vt, t.data());
  EXPECT_EQ(t[0], 1777593600.0);
  EXPECT_EQ(t[23], 1777593600.0 + 23 * 900.0);
  nc_close(nc);
}

TEST_F(SeriesNetcdfTest, UnfinishedWriterRemovesItsTemporaryFile) {
  const fs::path p = dir_ / "cancelled.nc";
  const std::vector<double> q(axis_.steps, 1.0);
  fs::path temp;
  {
    NetcdfSeriesWriter writer(p, axis_, ids(3));
    temp = writer.temporaryPath();
    writer.write(1, q, {}, {});
    EXPECT_TRUE(fs::exists(temp));
  }
  EXPECT_FALSE(fs::exists(temp));
  EXPECT_FALSE(fs::exists(p));
  EXPECT_EQ(filesInDir(), 0u);
}

TEST_F(SeriesNetcdfTest, RefusesIncompleteDuplicateAndMisSizedWrites) {
  const fs::path p = dir_ / "partial.nc";
  const std::vector<double> q(axis_.steps, 2.0);
  {
    NetcdfSeriesWriter writer(p, axis_, ids(3));
    writer.write(0, q, q, q);
    EXPECT_THROW(writer.write(0, q, q, q), InternalError);          // twice
    EXPECT_THROW(writer.write(7, q, q, q), InternalError);          // no such reach
    const std::vector<double> short_q(axis_.steps - 1, 2.0);
    EXPECT_THROW(writer.write(1, short_q, {}, {}), InternalError);  // wrong length
    writer.write(2, q, {}, {});
    EXPECT_EQ(writer.written(), 2u);
    EXPECT_THROW(writer.finish(), InternalError);                   // reach 1 missing
  }
  EXPECT_FALSE(fs::exists(p));
  EXPECT_EQ(filesInDir(), 0u);
}

TEST_F(SeriesNetcdfTest, OmittedDepthStaysFillAndOptionalVariablesCanBeLeftOut) {
  const fs::path p = dir_ / "q_only.nc";
  const std::vector<double> q(axis_.steps, 3.0);
  {
    NetcdfSeriesWriter writer(p, axis_, ids(2));
    writer.write(0, q, {}, q);
    writer.write(1, q, q, q);
    writer.finish();
  }
  int nc = 0;
  ASSERT_EQ(nc_open(p.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  EXPECT_EQ(column(nc, "depth", 0, axis_.steps), std::vector<double>(axis_.steps, NC_FILL_DOUBLE));
  EXPECT_EQ(column(nc, "depth", 1, axis_.steps), q);
  nc_close(nc);
  const fs::path p2 = dir_ / "outflow_only.nc";
  SeriesNetcdfOptions options;
  options.depth = false;
  options.velocity = false;
  {
    NetcdfSeriesWriter writer(p2, axis_, ids(1), options);
    writer.write(0, q, q, q);
    writer.finish();
  }
  ASSERT_EQ(nc_open(p2.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  int v = 0;
  EXPECT_EQ(nc_inq_varid(nc, "depth", &v), NC_ENOTVAR);
  EXPECT_EQ(nc_inq_varid(nc, "outflow", &v), NC_NOERR);
  nc_close(nc);
}

// Lakes on a dimension of their own beside the reaches: values read back
// per lake, and a lake never written (or written twice, or beyond the
// list) is refused, leaving no file behind.
TEST_F(SeriesNetcdfTest, LakeSeriesOnTheirOwnDimension) {
  const fs::path p = dir_ / "with-lakes.nc";
  const std::vector<double> q(axis_.steps, 3.0);
  const auto ramp = [&](double a) {
    std::vector<double> v(axis_.steps);
    for (std::size_t k = 0; k < v.size(); ++k) v[k] = a + static_cast<double>(k);
    return v;
  };
  SeriesNetcdfOptions options;
  options.lake_ids = {"Mere", "Tarn"};
  {
    NetcdfSeriesWriter writer(p, axis_, ids(2), options);
    writer.write(0, q, {}, {});
    writer.write(1, q, {}, {});
    writer.writeLake(1, ramp(10), ramp(20), ramp(30), ramp(40));
    EXPECT_THROW(writer.writeLake(1, ramp(10), ramp(20), ramp(30), ramp(40)), InternalError);
    EXPECT_THROW(writer.writeLake(2, ramp(10), ramp(20), ramp(30), ramp(40)), InternalError);
    EXPECT_THROW(writer.finish(), InternalError);  // Mere never written
  }
  EXPECT_EQ(filesInDir(), 0u);
  {
    NetcdfSeriesWriter writer(p, axis_, ids(2), options);
    writer.write(0, q, {}, {});
    writer.write(1, q, {}, {});
    writer.writeLake(1, ramp(10), ramp(20), ramp(30), ramp(40));
    writer.writeLake(0, ramp(1), ramp(2), ramp(3), ramp(4));
    writer.finish();
  }
  int nc = 0, dim = 0;
  ASSERT_EQ(nc_open(p.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  std::size_t lakes = 0;
  ASSERT_EQ(nc_inq_dimid(nc, "lake", &dim), NC_NOERR);
  nc_inq_dimlen(nc, dim, &lakes);
  EXPECT_EQ(lakes, 2u);
  EXPECT_EQ(column(nc, "lake_level", 0, axis_.steps), ramp(1));
  EXPECT_EQ(column(nc, "lake_outflow", 0, axis_.steps), ramp(4));
  EXPECT_EQ(column(nc, "lake_storage", 1, axis_.steps), ramp(20));
  EXPECT_EQ(column(nc, "lake_inflow", 1, axis_.steps), ramp(30));
  EXPECT_EQ(column(nc, "outflow", 1, axis_.steps), q);
  int v = 0;
  ASSERT_EQ(nc_inq_varid(nc, "lake_storage", &v), NC_NOERR);
  EXPECT_EQ(textAtt(nc, v, "units"), "m3");  // UDUNITS (CF-1.8 §3.1)
  EXPECT_EQ(textAtt(nc, v, "coordinates"), "lake_id");
  nc_close(nc);
}

// A file that cannot be created (here: the file-size limit, POSIX setrlimit
// RLIMIT_FSIZE, standing for a full disk) leaves no temporary file, and the
// message gives the system's reason, not netCDF's generic one. In a child
// process, so that the limit reaches no other test.
TEST_F(SeriesNetcdfTest, AFailedCreationLeavesNothingAndSaysWhy) {
  const fs::path p = dir_ / "full.nc";
  const fs::path message = dir_.string() + ".message";  // beside the folder, which must stay empty
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    std::string what = "no error";
    {
      ::signal(SIGXFSZ, SIG_IGN);
      const rlimit limit{1, RLIM_INFINITY};  // the soft limit only, so that it can be raised again
      ::setrlimit(RLIMIT_FSIZE, &limit);
      try {
        NetcdfSeriesWriter writer(p, axis_, ids(3));
      } catch (const std::exception& e) {
        what = e.what();
      }
      const rlimit none{RLIM_INFINITY, RLIM_INFINITY};
      ::setrlimit(RLIMIT_FSIZE, &none);  // raising the soft limit back up to the hard one
    }
    std::ofstream(message) << what;
    ::_exit(0);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  std::ifstream in(message);
  const std::string what((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(what.find("File too large"), std::string::npos) << what;
  EXPECT_EQ(what.find("Permission denied"), std::string::npos) << what;
  EXPECT_EQ(filesInDir(), 0u);
  fs::remove(message);
}
