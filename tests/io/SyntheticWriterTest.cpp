// Synthetic network outputs read back with GDAL/OGR (the GeoPackage), the
// project's NetCDF and CSV forcing readers, and netCDF-C directly.
#include "reachwise/io/SyntheticWriter.hpp"

#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <netcdf.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "support/Scratch.hpp"

using namespace reachwise;
using network::kSyntheticOutlet;
using network::SyntheticNetwork;

namespace {

SyntheticNetwork make(std::size_t n, std::uint64_t seed, std::size_t outlets = 1) {
  network::SyntheticOptions o;
  o.reaches = n;
  o.seed = seed;
  o.outlets = outlets;
  return network::generateSyntheticNetwork(o);
}

routing::TimeAxis hourly(std::size_t steps) {
  routing::TimeAxis axis;
  axis.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 0);
  axis.dt_s = 3600;
  axis.steps = steps;
  return axis;
}

}  // namespace

TEST(SyntheticWriter, GeoPackageReadsBackWithOgr) {
  testsupport::TempDir dir;
  const auto net = make(1500, 8, 2);
  const std::string path = dir.file("net.gpkg");
  io::writeSyntheticGpkg(path, net);
  GDALAllRegister();
  GDALDatasetUniquePtr ds(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  ASSERT_TRUE(ds);
  ASSERT_EQ(ds->GetLayerCount(), 1);
  OGRLayer* layer = ds->GetLayerByName("reaches");
  ASSERT_NE(layer, nullptr);
  EXPECT_EQ(layer->GetFeatureCount(), 1500);
  EXPECT_EQ(wkbFlatten(layer->GetGeomType()), wkbLineString);
  ASSERT_NE(layer->GetSpatialRef(), nullptr);
  EXPECT_STREQ(layer->GetSpatialRef()->GetAuthorityCode(nullptr), "32633");
  EXPECT_TRUE(layer->GetSpatialRef()->IsProjected());
  std::size_t i = 0, outlets = 0;
  for (const auto& f : *layer) {
    ASSERT_LT(i, net.size());
    EXPECT_EQ(std::string(f->GetFieldAsString("reach_id")), SyntheticNetwork::id(i));
    const bool outlet = !f->IsFieldSetAndNotNull(f->GetFieldIndex("to_reach"));
    outlets += outlet;
    EXPECT_EQ(outlet, net.downstream[i] == kSyntheticOutlet);
    if (!outlet) {
      EXPECT_EQ(std::string(f->GetFieldAsString("to_reach")), SyntheticNetwork::id(net.downstream[i]));
    }
    EXPECT_EQ(f->GetFieldAsDouble("slope"), net.slope[i]);
    EXPECT_EQ(f->GetFieldAsDouble("manning_n"), net.manning_n[i]);
    EXPECT_EQ(f->GetFieldAsDouble("bottom_width"), net.bottom_width_m[i]);
    EXPECT_EQ(f->GetFieldAsDouble("side_slope"), net.side_slope[i]);
    const auto* line = dynamic_cast<const OGRLineString*>(f->GetGeometryRef());
    ASSERT_NE(line, nullptr);
    // OGR's own planar length against the stored length field.
    EXPECT_NEAR(line->get_Length(), f->GetFieldAsDouble("length"), 1e-6);
    ASSERT_EQ(static_cast<std::size_t>(line->getNumPoints()), net.line(i).size());
    EXPECT_EQ(line->getX(0), net.line(i).front().x);
    ++i;
  }
  EXPECT_EQ(i, net.size());
  EXPECT_EQ(outlets, 2u);
}

TEST(SyntheticWriter, RefusesAnExistingOutputUnlessOverwrite) {
  testsupport::TempDir dir;
  const auto net = make(50, 1);
  const std::string path = dir.file("net.gpkg");
  { std::ofstream(path) << "keep me"; }
  EXPECT_THROW(io::writeSyntheticGpkg(path, net), InputError);
  EXPECT_EQ(std::filesystem::file_size(path), 7u);
  io::SyntheticGpkgOptions options;
  options.overwrite = true;
  io::writeSyntheticGpkg(path, net, options);
  EXPECT_GT(std::filesystem::file_size(path), 7u);
  // Nothing but the output is left in the folder (no temporary file).
  std::size_t files = 0;
  for ([[maybe_unused]] const auto& e : std::filesystem::directory_iterator(dir.path())) ++files;
  EXPECT_EQ(files, 1u);
  EXPECT_THROW(io::writeSyntheticLateralNetcdf(path, net, {}, hourly(10), false), InputError);
}

TEST(SyntheticWriter, LateralNetcdfReadsBackWithTheAxisAndValues) {
  testsupport::TempDir dir;
  const auto net = make(300, 2);
  const auto axis = hourly(73);
  network::SyntheticStorm storm;
  storm.seed = 2;
  const std::string path = dir.file("lateral.nc");
  io::writeSyntheticLateralNetcdf(path, net, storm, axis, false);

  const io::NetcdfForcingSource source(path);
  EXPECT_EQ(source.axis().start_unix_s, testsupport::utcSeconds(2026, 5, 1, 0));
  EXPECT_EQ(source.axis().dt_s, 3600.0);
  EXPECT_EQ(source.axis().steps, 73u);
  EXPECT_EQ(source.ids(io::ForcingKind::Lateral).size(), net.size());
  EXPECT_TRUE(source.ids(io::ForcingKind::Inflow).empty());
  std::vector<double> got, expected(axis.steps);
  for (std::size_t i : {0u, 1u, 150u, 299u}) {
    ASSERT_TRUE(source.lateral(SyntheticNetwork::id(i), got));
    network::syntheticLateral(net, i, storm, axis, expected);
    EXPECT_EQ(got, expected) << i;
  }

  // netCDF-C directly: the layout of docs/formats.md.
  int ncid = 0, var = 0, dims[2] = {0, 0}, ndims = 0;
  ASSERT_EQ(nc_open(path.c_str(), NC_NOWRITE, &ncid), NC_NOERR);
  ASSERT_EQ(nc_inq_varid(ncid, "lateral", &var), NC_NOERR);
  ASSERT_EQ(nc_inq_var(ncid, var, nullptr, nullptr, &ndims, dims, nullptr), NC_NOERR);
  ASSERT_EQ(ndims, 2);
  char name[NC_MAX_NAME + 1] = {};
  nc_inq_dimname(ncid, dims[0], name);
  EXPECT_STREQ(name, "time");
  nc_inq_dimname(ncid, dims[1], name);
  EXPECT_STREQ(name, "reach");
  double value = 0;
  const std::size_t at[2] = {40, 150};
  ASSERT_EQ(nc_get_var1_double(ncid, var, at, &value), NC_NOERR);
  network::syntheticLateral(net, 150, storm, axis, expected);
  EXPECT_EQ(value, expected[40]);
  nc_close(ncid);
}

TEST(SyntheticWriter, InflowCsvReadsBackWithTheCsvReader) {
  testsupport::TempDir dir;
  const auto net = make(400, 6, 2);
  const auto axis = hourly(30);
  const std::string path = dir.file("inflow.csv");
  io::writeSyntheticInflowCsv(path, net, {}, axis, false);
  const io::Forcing forcing = io::readForcingCsv(std::filesystem::path(path), std::nullopt);
  EXPECT_EQ(forcing.axis.start_unix_s, axis.start_unix_s);
  EXPECT_EQ(forcing.axis.dt_s, 3600.0);
  EXPECT_EQ(forcing.axis.steps, 30u);
  const auto expected = network::syntheticInflow(net, {}, axis);
  ASSERT_EQ(forcing.inflow.size(), expected.size());
  for (const auto& e : expected) {
    const auto it = forcing.inflow.find(SyntheticNetwork::id(e.reach));
    ASSERT_NE(it, forcing.inflow.end());
    // Written in the shortest form that reads back to the same double.
    EXPECT_EQ(it->second, e.discharge_m3s);
  }
}
