#include "support/Scratch.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "reachwise/io/ForcingFiles.hpp"

#include <algorithm>
#include <netcdf.h>
#include <unistd.h>

#include <fstream>
#include <optional>
#include <random>
#include <thread>

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

class ForcingNetcdfTest : public ::testing::Test {
protected:
  std::size_t filesInDir() const {
    return static_cast<std::size_t>(std::distance(fs::directory_iterator(dir_), fs::directory_iterator()));
  }
  testsupport::TempDir tmp_;
  const fs::path dir_ = tmp_.path();
};

Forcing sampleForcing(unsigned seed) {
  Forcing f;
  f.axis.start_unix_s = parseIsoTime("2026-05-01T00:00:00+02:00").unix_s;
  f.axis.dt_s = 1800;
  f.axis.steps = 48;
  f.axis.utc_offset_min = 120;
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> q(0, 250);
  const auto series = [&] {
    std::vector<double> v(f.axis.steps);
    for (double& x : v) x = q(rng);
    return v;
  };
  f.inflow["R1"] = series();
  f.inflow["R12"] = series();
  f.lateral["R12"] = series();
  f.lateral["R3"] = series();
  f.lateral["R3"][5] = 0.0;
  return f;
}

std::string textAtt(int ncid, int varid, const char* name) {
  std::size_t len = 0;
  EXPECT_EQ(nc_inq_attlen(ncid, varid, name, &len), NC_NOERR) << name;
  std::string s(len, '\0');
  EXPECT_EQ(nc_get_att_text(ncid, varid, name, s.data()), NC_NOERR) << name;
  return s;
}

/// Builds a file by hand with the netCDF-C API: (reach, time) order, a char
/// reach_id, float data, time in hours, and the given extra twists.
struct HandFile {
  std::string time_units = "hours since 2026-05-01 00:00:00";
  std::string calendar = "gregorian";
  std::string units = "ft3 s-1";
  std::vector<double> hours{0, 1, 2, 3};
  std::vector<std::string> ids{"A", "B"};
  std::vector<float> values{1, 2, 3, 4, 10, 20, 30, 40};   // (reach, time)
  bool with_units = true;
  std::optional<double> utc_offset_minutes;   ///< on `time`, when set
};

void writeHand(const fs::path& p, const HandFile& h) {
  int nc = 0, dt = 0, dr = 0, ds = 0, vt = 0, vid = 0, vq = 0;
  ASSERT_EQ(nc_create(p.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc), NC_NOERR);
  nc_def_dim(nc, "time", h.hours.size(), &dt);
  nc_def_dim(nc, "reach", h.ids.size(), &dr);
  nc_def_dim(nc, "id_len", 8, &ds);
  nc_def_var(nc, "time", NC_DOUBLE, 1, &dt, &vt);
  nc_put_att_text(nc, vt, "units", h.time_units.size(), h.time_units.c_str());
  nc_put_att_text(nc, vt, "calendar", h.calendar.size(), h.calendar.c_str());
  if (h.utc_offset_minutes) nc_put_att_double(nc, vt, "utc_offset_minutes", NC_DOUBLE, 1, &*h.utc_offset_minutes);
  const int id_dims[2] = {dr, ds};
  nc_def_var(nc, "reach_id", NC_CHAR, 2, id_dims, &vid);
  const int q_dims[2] = {dr, dt};
  nc_def_var(nc, "lateral", NC_FLOAT, 2, q_dims, &vq);
  if (h.with_units) nc_put_att_text(nc, vq, "units", h.units.size(), h.units.c_str());
  const float fill = -9999.0f;
  nc_put_att_float(nc, vq, "_FillValue", NC_FLOAT, 1, &fill);
  ASSERT_EQ(nc_enddef(nc), NC_NOERR);
  nc_put_var_double(nc, vt, h.hours.data());
  std::string ids(h.ids.size() * 8, '\0');
  for (std::size_t r = 0; r < h.ids.size(); ++r) ids.replace(r * 8, h.ids[r].size(), h.ids[r]);
  nc_put_var_text(nc, vid, ids.data());
  nc_put_var_float(nc, vq, h.values.data());
  ASSERT_EQ(nc_close(nc), NC_NOERR);
}

void expectInputErrorNaming(const std::function<void()>& f, const fs::path& p, const std::string& says) {
  try {
    f();
    ADD_FAILURE() << "no InputError for " << p << " (" << says << ")";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_EQ(e.where().file, p.string()) << what;
    EXPECT_NE(what.find(says), std::string::npos) << what;
  }
}

}  // namespace

TEST_F(ForcingNetcdfTest, WriteThenReadBackIdentical) {
  const Forcing f = sampleForcing(11);
  const fs::path p = dir_ / "forcing.nc";
  writeForcingNetcdf(p, f);
  EXPECT_TRUE(fs::exists(p));
  EXPECT_EQ(filesInDir(), 1u);  // no temporary left beside it
  const Forcing g = readForcingNetcdf(p);
  EXPECT_EQ(g.axis.start_unix_s, f.axis.start_unix_s);
  EXPECT_EQ(g.axis.dt_s, f.axis.dt_s);
  EXPECT_EQ(g.axis.steps, f.axis.steps);
  EXPECT_EQ(g.axis.utc_offset_min, 120);
  EXPECT_EQ(g.inflow, f.inflow);    // bit-identical doubles
  EXPECT_EQ(g.lateral, f.lateral);  // R1 has no lateral, R3 no inflow: both stay absent
  EXPECT_EQ(g.inflow_origin, p.string());
}

TEST_F(ForcingNetcdfTest, WrittenFileCarriesTheCfAttributesAndLayout) {
  // Attribute names and values checked against the CF Conventions 1.8
  // document: §2.6.1 (Conventions = "CF-1.8", title, source), §4.4 (time
  // units "<unit> since <date>", calendar "standard"), §3.1 (units),
  // §2.5.1 (_FillValue), §9.5 (cf_role = "timeseries_id").
  const Forcing f = sampleForcing(3);
  const fs::path p = dir_ / "cf.nc";
  ForcingNetcdfOptions options;
  options.title = "Synthetic storm on the Brannock network";
  options.source = "reachwise test";
  writeForcingNetcdf(p, f, options);
  int nc = 0;
  ASSERT_EQ(nc_open(p.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "Conventions"), "CF-1.8");
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "title"), options.title);
  EXPECT_EQ(textAtt(nc, NC_GLOBAL, "source"), options.source);
  int dt = 0, dr = 0, vt = 0, vid = 0, vin = 0, vlat = 0;
  ASSERT_EQ(nc_inq_dimid(nc, "time", &dt), NC_NOERR);
  ASSERT_EQ(nc_inq_dimid(nc, "reach", &dr), NC_NOERR);
  std::size_t nt = 0, nr = 0;
  nc_inq_dimlen(nc, dt, &nt);
  nc_inq_dimlen(nc, dr, &nr);
  EXPECT_EQ(nt, 48u);
  EXPECT_EQ(nr, 3u);  // R1, R12, R3
  ASSERT_EQ(nc_inq_varid(nc, "time", &vt), NC_NOERR);
  EXPECT_EQ(textAtt(nc, vt, "units"), "seconds since 1970-01-01T00:00:00Z");
  EXPECT_EQ(textAtt(nc, vt, "calendar"), "standard");
  EXPECT_EQ(textAtt(nc, vt, "standard_name"), "time");
  double t0 = 0;
  const std::size_t zero = 0;
  nc_get_var1_double(nc, vt, &zero, &t0);
  EXPECT_EQ(t0, static_cast<double>(parseIsoTime("2026-04-30T22:00:00Z").unix_s));
  ASSERT_EQ(nc_inq_varid(nc, "reach_id", &vid), NC_NOERR);
  nc_type type = NC_NAT;
  nc_inq_vartype(nc, vid, &type);
  EXPECT_EQ(type, NC_STRING);
  EXPECT_EQ(textAtt(nc, vid, "cf_role"), "timeseries_id");
  for (const char* name : {"inflow", "lateral"}) {
    int v = 0;
    ASSERT_EQ(nc_inq_varid(nc, name, &v), NC_NOERR) << name;
    EXPECT_EQ(textAtt(nc, v, "units"), "m3 s-1");
    double fill = 0;
    ASSERT_EQ(nc_get_att_double(nc, v, "_FillValue", &fill), NC_NOERR);
    EXPECT_EQ(fill, NC_FILL_DOUBLE);
    int dims[2] = {-1, -1};
    nc_inq_vardimid(nc, v, dims);
    EXPECT_EQ(dims[0], dt);
    EXPECT_EQ(dims[1], dr);
    int storage = 0;
    std::size_t chunks[2] = {0, 0};
    ASSERT_EQ(nc_inq_var_chunking(nc, v, &storage, chunks), NC_NOERR);
    EXPECT_EQ(storage, NC_CHUNKED);
    EXPECT_EQ(chunks[0], 48u);  // the whole series of ...
    EXPECT_EQ(chunks[1], 1u);   // ... one reach per chunk
  }
  nc_inq_varid(nc, "inflow", &vin);
  nc_inq_varid(nc, "lateral", &vlat);
  // R3 (index 2) has no inflow: its column is _FillValue.
  const std::size_t at[2] = {0, 2};
  double q = 0;
  nc_get_var1_double(nc, vin, at, &q);
  EXPECT_EQ(q, NC_FILL_DOUBLE);
  nc_close(nc);
}

TEST_F(ForcingNetcdfTest, SourceReadsOneReachOnDemand) {
  const Forcing f = sampleForcing(5);
  const fs::path p = dir_ / "src.nc";
  writeForcingNetcdf(p, f);
  const NetcdfForcingSource source(p);
  EXPECT_EQ(source.axis().steps, 48u);
  EXPECT_TRUE(source.has(ForcingKind::Lateral, "R3"));
  EXPECT_FALSE(source.has(ForcingKind::Lateral, "R99"));
  std::vector<double> out{-1};
  EXPECT_TRUE(source.lateral("R3", out));
  EXPECT_EQ(out, f.lateral.at("R3"));
  EXPECT_FALSE(source.lateral("R1", out));  // all _FillValue
  EXPECT_FALSE(source.inflow("R99", out));
  EXPECT_EQ(out, f.lateral.at("R3"));       // untouched by the misses
  EXPECT_EQ(source.ids(), (std::vector<std::string>{"R1", "R12", "R3"}));
  // The unordered visit sees the ids ids() lists, each once.
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    std::vector<std::string> visited;
    source.visitIds(kind, [&](std::string_view id) { visited.emplace_back(id); });
    std::sort(visited.begin(), visited.end());
    EXPECT_EQ(visited, source.ids(kind));
  }
  try {
    requireKnownReaches(source, std::set<std::string, std::less<>>{"R1"});
    ADD_FAILURE() << "unknown reaches accepted";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_NE(what.find("R12, R3"), std::string::npos) << what;  // listed in id order
    EXPECT_NE(what.find(p.string()), std::string::npos) << what;
  }
}

TEST_F(ForcingNetcdfTest, ReadsHoursCharIdsReachFirstAndCubicFeet) {
  const fs::path p = dir_ / "hand.nc";
  writeHand(p, HandFile{});
  const NetcdfForcingSource source(p);
  EXPECT_EQ(source.axis().start_unix_s, parseIsoTime("2026-05-01T00:00:00Z").unix_s);
  EXPECT_EQ(source.axis().dt_s, 3600.0);
  EXPECT_TRUE(source.ids(ForcingKind::Inflow).empty());
  source.visitIds(ForcingKind::Inflow, [](std::string_view id) { ADD_FAILURE() << "inflow id " << id; });
  std::vector<double> b;
  ASSERT_TRUE(source.lateral("B", b));
  // 1 ft^3/s = 0.3048^3 m^3/s exactly (international foot, 1959).
  const double cfs = 0.3048 * 0.3048 * 0.3048;
  ASSERT_EQ(b.size(), 4u);
  for (std::size_t k = 0; k < 4; ++k) EXPECT_NEAR(b[k], 10.0 * static_cast<double>(k + 1) * cfs, 1e-12);
}

TEST_F(ForcingNetcdfTest, BadFilesNameTheFile) {
  int n = 0;
  const auto variant = [&](auto tweak, const std::string& says) {
    HandFile h;
    tweak(h);
    const fs::path p = dir_ / ("bad" + std::to_string(n++) + ".nc");
    writeHand(p, h);
    expectInputErrorNaming(
        [&] {
          const NetcdfForcingSource source(p);
          std::vector<double> out;
          source.lateral("A", out);
          source.lateral("B", out);
        },
        p, says);
  };
  variant([](HandFile& h) { h.with_units = false; }, "units");
  variant([](HandFile& h) { h.units = "mm"; }, "not a discharge");
  variant([](HandFile& h) { h.hours = {0, 1, 3, 4}; }, "uniform step");
  variant([](HandFile& h) { h.calendar = "noleap"; }, "calendar");
  variant([](HandFile& h) { h.time_units = "fortnights since 2026-05-01"; }, "time unit");
  variant([](HandFile& h) { h.time_units = "hours since 2026-13-01"; }, "month 13");
  // Times outside what an axis may cover (1678-2261), an offset beyond ±18:00.
  // Each time is checked as it is read: the first one out of range is named.
  variant([](HandFile& h) { h.time_units = "hours since 1500-05-01"; }, "time index 0 (0 in units");
  variant([](HandFile& h) { h.time_units = "days since 2261-12-30"; }, "time index 2 (2 in units");
  variant([](HandFile& h) { h.time_units = "days since 2261-12-30"; }, "outside the years 1678-2261");
  variant([](HandFile& h) { h.utc_offset_minutes = 19 * 60; }, "±18:00");
  variant([](HandFile& h) { h.ids = {"A", "A"}; }, "twice");
  variant([](HandFile& h) { h.values[5] = -9999.0f; }, "missing value");
  variant([](HandFile& h) { h.values[2] = -1.0f; }, "is negative");
  const fs::path text = dir_ / "not.nc";
  std::ofstream(text) << "time,R1\n";
  expectInputErrorNaming([&] { NetcdfForcingSource source(text); }, text, "netCDF");
  expectInputErrorNaming([&] { NetcdfForcingSource source(dir_ / "none.nc"); }, dir_ / "none.nc", "opening");
}

TEST_F(ForcingNetcdfTest, UnfinishedWriterLeavesNothing) {
  const Forcing f = sampleForcing(1);
  const fs::path p = dir_ / "never.nc";
  {
    NetcdfForcingWriter writer(p, f.axis, {"R1", "R2"}, true, false);
    writer.write(ForcingKind::Inflow, 0, f.inflow.at("R1"));
    EXPECT_EQ(filesInDir(), 1u);  // the temporary file exists meanwhile
    EXPECT_FALSE(fs::exists(p));
  }
  EXPECT_EQ(filesInDir(), 0u);
  NetcdfForcingWriter writer(p, f.axis, {"R1"}, true, false);
  EXPECT_THROW(writer.write(ForcingKind::Lateral, 0, f.inflow.at("R1")), InternalError);
  std::vector<double> bad = f.inflow.at("R1");
  bad[3] = -2;
  EXPECT_THROW(writer.write(ForcingKind::Inflow, 0, bad), InvalidParameter);
}

TEST_F(ForcingNetcdfTest, ConcurrentReadsFromSeveralThreadsGiveTheStoredSeries) {
  // The scheduler may pull forcing from several threads: each of them must
  // get the stored series. (Races in netCDF-C do not show reliably in a
  // test this small; the lock is there because the library documents no
  // thread safety.)
  const Forcing f = sampleForcing(9);
  const fs::path p = dir_ / "threads.nc";
  writeForcingNetcdf(p, f);
  const NetcdfForcingSource source(p);
  std::vector<int> mismatches(4, 0);
  std::vector<std::thread> threads;
  for (int t = 0; t < 4; ++t)
    threads.emplace_back([&, t] {
      std::vector<double> out;
      for (int i = 0; i < 50; ++i) {
        if (!source.inflow("R12", out) || out != f.inflow.at("R12")) ++mismatches[t];
        if (!source.lateral("R3", out) || out != f.lateral.at("R3")) ++mismatches[t];
      }
    });
  for (auto& th : threads) th.join();
  EXPECT_EQ(mismatches, std::vector<int>(4, 0));
}

TEST_F(ForcingNetcdfTest, SinglePrecisionStoresFloatsAndReadsThemBack) {
  // Values come back as the nearest IEEE 754 single-precision number, and a
  // reach never written still reads as "no series" (the float _FillValue).
  const Forcing f = sampleForcing(4);
  const fs::path p = dir_ / "single.nc";
  ForcingNetcdfOptions options;
  options.single_precision = true;
  {
    NetcdfForcingWriter writer(p, f.axis, {"R1", "R12", "R9"}, true, false, options);
    writer.write(ForcingKind::Inflow, 0, f.inflow.at("R1"));
    writer.write(ForcingKind::Inflow, 1, f.inflow.at("R12"));
    writer.finish();
  }
  int ncid = 0, var = 0;
  nc_type type = NC_NAT;
  ASSERT_EQ(nc_open(p.c_str(), NC_NOWRITE, &ncid), NC_NOERR);
  ASSERT_EQ(nc_inq_varid(ncid, "inflow", &var), NC_NOERR);
  ASSERT_EQ(nc_inq_vartype(ncid, var, &type), NC_NOERR);
  nc_close(ncid);
  EXPECT_EQ(type, NC_FLOAT);
  const NetcdfForcingSource source(p);
  std::vector<double> got;
  for (const char* id : {"R1", "R12"}) {
    ASSERT_TRUE(source.inflow(id, got)) << id;
    const auto& want = f.inflow.at(id);
    ASSERT_EQ(got.size(), want.size());
    for (std::size_t k = 0; k < want.size(); ++k)
      EXPECT_EQ(got[k], static_cast<double>(static_cast<float>(want[k]))) << id << " " << k;
  }
  EXPECT_FALSE(source.inflow("R9", got));
}

TEST_F(ForcingNetcdfTest, AFileWithoutTheKindItIsGivenAsIsRefused) {
  // Inflow series only: given as the lateral inflow it names the variable
  // it lacks; given as the inflow it opens.
  Forcing f = sampleForcing(4);
  f.lateral.clear();
  const fs::path nc = dir_ / "inflow_only.nc";
  writeForcingNetcdf(nc, f);
  expectInputErrorNaming([&] { openForcing(std::nullopt, nc); }, nc, "has no `lateral` variable");
  const OpenedForcing opened = openForcing(nc, std::nullopt);
  std::vector<double> q;
  EXPECT_TRUE(opened.source->inflow(f.inflow.begin()->first, q));
}

TEST_F(ForcingNetcdfTest, ACsvFileBesideIsResampledOntoTheNetcdfAxis) {
  const Forcing f = sampleForcing(5);  // 48 half-hourly steps from 2026-05-01T00:00+02:00
  const fs::path nc = dir_ / "lateral.nc";
  writeForcingNetcdf(nc, f);
  // Hourly inflow in UTC, the first sample at the NetCDF start (22:00Z).
  const fs::path csv = dir_ / "inflow.csv";
  std::ofstream(csv) << "time,R9\n2026-04-30T22:00Z,0\n2026-04-30T23:00Z,10\n2026-05-01T00:00Z,4\n";
  const OpenedForcing opened = openForcing(csv, nc);
  const routing::TimeAxis& axis = opened.source->axis();
  EXPECT_EQ(axis.start_unix_s, f.axis.start_unix_s);
  EXPECT_EQ(axis.dt_s, 1800.0);
  EXPECT_EQ(axis.steps, 48u);
  EXPECT_EQ(axis.utc_offset_min, 120);
  std::vector<double> q;
  ASSERT_TRUE(opened.source->inflow("R9", q));
  // Hand-computed: halfway values 5 and 7 between the samples, then held at 4.
  std::vector<double> expected(48, 4.0);
  expected[0] = 0, expected[1] = 5, expected[2] = 10, expected[3] = 7;
  EXPECT_EQ(q, expected);
  ASSERT_EQ(opened.warnings.size(), 1u);
  EXPECT_NE(opened.warnings[0].find("last value"), std::string::npos) << opened.warnings[0];
  // Another axis asked for explicitly disagrees with the file's.
  CsvForcingOptions other;
  other.on_axis = f.axis;
  other.on_axis->dt_s = 3600;
  other.on_axis->steps = 24;
  expectInputErrorNaming([&] { openForcing(csv, nc, other); }, nc, "another axis");
}

namespace {

/// A forcing file laid out as other tools may write it: `lateral` in
/// (time, reach) or (reach, time) order, float or double, contiguous (no
/// chunks) or in the given chunks. values[r][t]; `fill` marks missing.
struct Layout {
  bool time_first = true;
  bool as_float = false;
  std::vector<std::size_t> chunks;  ///< empty: contiguous
  bool classic = false;             ///< a netCDF-3 file (no chunks)
};

void writeLayout(const fs::path& p, const std::vector<std::string>& ids, const std::vector<std::vector<double>>& values,
                 const Layout& layout, double fill) {
  const std::size_t reaches = ids.size(), steps = values.front().size();
  int nc = 0, dt = 0, dr = 0, ds = 0, vt = 0, vid = 0, vq = 0;
  ASSERT_EQ(nc_create(p.c_str(), (layout.classic ? 0 : NC_NETCDF4) | NC_CLOBBER, &nc), NC_NOERR);
  nc_def_dim(nc, "time", steps, &dt);
  nc_def_dim(nc, "reach", reaches, &dr);
  nc_def_dim(nc, "id_len", 8, &ds);
  nc_def_var(nc, "time", NC_DOUBLE, 1, &dt, &vt);
  const std::string units = "hours since 2026-05-01 00:00:00";
  nc_put_att_text(nc, vt, "units", units.size(), units.c_str());
  const int id_dims[2] = {dr, ds};
  nc_def_var(nc, "reach_id", NC_CHAR, 2, id_dims, &vid);
  const int q_dims[2] = {layout.time_first ? dt : dr, layout.time_first ? dr : dt};
  ASSERT_EQ(nc_def_var(nc, "lateral", layout.as_float ? NC_FLOAT : NC_DOUBLE, 2, q_dims, &vq), NC_NOERR);
  if (!layout.classic) {  // netCDF-3 has no chunks: always contiguous
    if (layout.chunks.empty()) ASSERT_EQ(nc_def_var_chunking(nc, vq, NC_CONTIGUOUS, nullptr), NC_NOERR);
    else ASSERT_EQ(nc_def_var_chunking(nc, vq, NC_CHUNKED, layout.chunks.data()), NC_NOERR);
  }
  nc_put_att_text(nc, vq, "units", 7, "m3 s-1");
  if (layout.as_float) {
    const float f = static_cast<float>(fill);
    nc_put_att_float(nc, vq, "_FillValue", NC_FLOAT, 1, &f);
  } else {
    nc_put_att_double(nc, vq, "_FillValue", NC_DOUBLE, 1, &fill);
  }
  ASSERT_EQ(nc_enddef(nc), NC_NOERR);
  std::vector<double> hours(steps);
  for (std::size_t t = 0; t < steps; ++t) hours[t] = static_cast<double>(t);
  nc_put_var_double(nc, vt, hours.data());
  std::string text(reaches * 8, '\0');
  for (std::size_t r = 0; r < reaches; ++r) text.replace(r * 8, ids[r].size(), ids[r]);
  nc_put_var_text(nc, vid, text.data());
  std::vector<double> flat;
  for (std::size_t a = 0; a < (layout.time_first ? steps : reaches); ++a)
    for (std::size_t b = 0; b < (layout.time_first ? reaches : steps); ++b)
      flat.push_back(layout.time_first ? values[b][a] : values[a][b]);
  ASSERT_EQ(nc_put_var_double(nc, vq, flat.data()), NC_NOERR);  // converted to float by the library
  ASSERT_EQ(nc_close(nc), NC_NOERR);
}

}  // namespace

TEST_F(ForcingNetcdfTest, FilesLaidOutTimeByTimeAreReadWholeWithTheSameSeries) {
  // 40 reaches x 30 hourly steps; multiples of 1/8 are exact in float too.
  const std::size_t reaches = 40, steps = 30;
  std::vector<std::string> ids;
  std::vector<std::vector<double>> values(reaches, std::vector<double>(steps));
  for (std::size_t r = 0; r < reaches; ++r) {
    ids.push_back("L" + std::to_string(r));
    for (std::size_t t = 0; t < steps; ++t) values[r][t] = static_cast<double>((r * 37 + t * 11) % 97) / 8.0;
  }
  const double fill = -9999.0;
  for (double& v : values[7]) v = fill;  // no series of this reach

  // The reference: one chunk per reach, read reach by reach.
  const fs::path ref = dir_ / "by_reach.nc";
  writeLayout(ref, ids, values, Layout{true, false, {steps, 1}}, fill);
  const NetcdfForcingSource by_reach(ref);
  EXPECT_FALSE(by_reach.readWhole(ForcingKind::Lateral));

  const std::vector<std::pair<std::string, Layout>> layouts{
      {"contiguous (time, reach), double", Layout{true, false, {}}},
      {"one time step per chunk, float", Layout{true, true, {1, reaches}}},
      {"chunks of 4 steps x 16 reaches, double", Layout{true, false, {4, 16}}},
      {"(reach, time) in chunks of 16 reaches, float", Layout{false, true, {16, steps}}},
      {"netCDF-3, (time, reach), float", Layout{true, true, {}, true}},
  };
  for (const auto& [what, layout] : layouts) {
    const fs::path p = dir_ / "layout.nc";
    writeLayout(p, ids, values, layout, fill);
    const NetcdfForcingSource source(p);
    EXPECT_FALSE(source.readWhole(ForcingKind::Lateral)) << what << ": read before it is asked for";
    std::vector<double> want, got;
    for (const std::string& id : ids) {
      const bool has = by_reach.lateral(id, want);
      EXPECT_EQ(source.lateral(id, got), has) << what << " " << id;
      EXPECT_EQ(got, want) << what << " " << id;
    }
    EXPECT_FALSE(source.lateral(ids[7], got)) << what;
    EXPECT_TRUE(source.readWhole(ForcingKind::Lateral)) << what;
  }

  // A value missing inside a series is still named by reach and time.
  values[12][5] = fill;
  const fs::path holed = dir_ / "holed.nc";
  writeLayout(holed, ids, values, Layout{true, false, {}}, fill);
  const NetcdfForcingSource source(holed);
  std::vector<double> got;
  ASSERT_TRUE(source.lateral("L11", got));
  ASSERT_TRUE(source.readWhole(ForcingKind::Lateral));
  try {
    source.lateral("L12", got);
    ADD_FAILURE() << "missing value accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, holed.string());
    EXPECT_EQ(e.where().reach_id, "L12");
    EXPECT_NE(std::string(e.what()).find("2026-05-01T05:00"), std::string::npos) << e.what();
  }
}
