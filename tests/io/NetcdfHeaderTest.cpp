// The classic-format header check run before netCDF-C opens a file
// (io/NetcdfHeader.hpp). Headers are laid out by hand as the NetCDF Users
// Guide's "File Format Specifications" gives them, and files written by
// netCDF-C itself (an independent writer) must all pass.

#include "reachwise/io/NetcdfHeader.hpp"

#include <gtest/gtest.h>
#include <netcdf.h>

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <utility>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "support/Scratch.hpp"

using reachwise::io::classicHeaderProblem;
namespace fs = std::filesystem;

namespace {

struct Bytes {
  std::vector<std::uint8_t> b;
  bool wide = false;
  void u32(std::uint32_t v) {
    for (int k = 3; k >= 0; --k) b.push_back(static_cast<std::uint8_t>(v >> (8 * k)));
  }
  void u64(std::uint64_t v) {
    for (int k = 7; k >= 0; --k) b.push_back(static_cast<std::uint8_t>(v >> (8 * k)));
  }
  void count(std::uint64_t v) { wide ? u64(v) : u32(static_cast<std::uint32_t>(v)); }
  void name(const std::string& s) {
    count(s.size());
    b.insert(b.end(), s.begin(), s.end());
    while (b.size() % 4) b.push_back(0);
  }
};

/// How many entries a header says its lists have (a damaged header claims
/// more than it holds).
struct Claims {
  std::uint64_t dimensions = 2, global_attributes = 1, variables = 1, variable_dimensions = 2;
};

/// A header with dimensions reach (3) and time (4), a global text
/// attribute, and one variable `inflow(time, reach)` of `type` with a
/// `units` attribute.
std::vector<std::uint8_t> header(std::uint8_t version, std::uint32_t type, const Claims& claims = {}) {
  Bytes h;
  h.wide = version == 5;
  h.b = {'C', 'D', 'F', version};
  h.count(0);             // numrecs
  h.u32(0x0A);            // NC_DIMENSION
  h.count(claims.dimensions);
  h.name("reach");
  h.count(3);
  h.name("time");
  h.count(4);
  h.u32(0x0C);            // NC_ATTRIBUTE (global)
  h.count(claims.global_attributes);
  h.name("title");
  h.u32(2);               // NC_CHAR
  h.count(5);
  for (char c : std::string("hello")) h.b.push_back(static_cast<std::uint8_t>(c));
  while (h.b.size() % 4) h.b.push_back(0);
  h.u32(0x0B);            // NC_VARIABLE
  h.count(claims.variables);
  h.name("inflow");
  h.count(claims.variable_dimensions);
  h.count(1);             // time
  h.count(0);             // reach
  h.u32(0x0C);
  h.count(1);
  h.name("units");
  h.u32(2);
  h.count(6);
  for (char c : std::string("m3 s-1")) h.b.push_back(static_cast<std::uint8_t>(c));
  while (h.b.size() % 4) h.b.push_back(0);
  h.u32(type);
  h.count(96);            // vsize
  if (version == 1) h.u32(200); else h.u64(200);  // begin
  return h.b;
}

}  // namespace

TEST(NetcdfHeader, TypesTheFormatHasPass) {
  for (std::uint8_t version : {1, 2, 5}) {
    for (std::uint32_t type = 1; type <= 6; ++type)
      EXPECT_FALSE(classicHeaderProblem(header(version, type))) << int(version) << " " << type;
  }
  for (std::uint32_t type = 7; type <= 11; ++type) EXPECT_FALSE(classicHeaderProblem(header(5, type))) << type;
}

TEST(NetcdfHeader, ATypeTheFormatLacksIsNamedWithItsVariable) {
  // 12 is netCDF-4's string; 7 (ubyte) exists in CDF-5 only.
  for (std::uint8_t version : {1, 2, 5}) {
    const auto problem = classicHeaderProblem(header(version, 12));
    ASSERT_TRUE(problem) << int(version);
    EXPECT_NE(problem->find("'inflow'"), std::string::npos) << *problem;
    EXPECT_NE(problem->find("type 12"), std::string::npos) << *problem;
  }
  EXPECT_TRUE(classicHeaderProblem(header(2, 7)));
  EXPECT_TRUE(classicHeaderProblem(header(1, 0)));
}

TEST(NetcdfHeader, WhatIsNotAWholeClassicHeaderIsLeftToNetcdf) {
  auto h = header(2, 12);
  EXPECT_FALSE(classicHeaderProblem(std::vector<std::uint8_t>(h.begin(), h.begin() + 40), false));  // ends early
  EXPECT_FALSE(classicHeaderProblem(std::vector<std::uint8_t>{0x89, 'H', 'D', 'F'}));      // netCDF-4
  EXPECT_FALSE(classicHeaderProblem(std::vector<std::uint8_t>{'C', 'D', 'F', 3}));
  EXPECT_FALSE(classicHeaderProblem({}));
}

TEST(NetcdfHeader, ListsLongerThanTheFileAreRefused) {
  // netCDF-C sizes its tables from these counts before reading an entry;
  // a count no file of this size can hold is refused by name.
  const std::uint64_t huge = 100'000'000;
  const std::pair<Claims, std::string> cases[] = {
      {{huge, 1, 1, 2}, "100000000 dimensions"},
      {{2, huge, 1, 2}, "100000000 attributes of the file"},
      {{2, 1, huge, 2}, "100000000 variables"},
      {{2, 1, 1, huge}, "100000000 dimensions of variable 'inflow'"},
  };
  for (std::uint8_t version : {1, 2, 5}) {
    for (const auto& [claims, words] : cases) {
      const auto h = header(version, 6, claims);
      const auto problem = classicHeaderProblem(h);
      ASSERT_TRUE(problem) << int(version) << " " << words;
      EXPECT_NE(problem->find(words), std::string::npos) << *problem;
      // The start of a longer file may be followed by what the list needs,
      // so its counts are not judged (the walk may still trip over
      // something else in what follows).
      if (const auto start = classicHeaderProblem(h, false)) {
        EXPECT_EQ(start->find("after that count"), std::string::npos) << *start;
      }
    }
  }
  // The same header with its true counts passes.
  EXPECT_FALSE(classicHeaderProblem(header(1, 6, {2, 1, 1, 2})));
}

TEST(NetcdfHeader, FilesWrittenByNetcdfPass) {
  testsupport::TempDir dir;
  for (int mode : {0, NC_64BIT_OFFSET, NC_64BIT_DATA}) {
    const fs::path path = dir.path() / ("f" + std::to_string(mode) + ".nc");
    int nc = -1, dims[2], var = -1;
    ASSERT_EQ(nc_create(path.c_str(), NC_CLOBBER | mode, &nc), NC_NOERR);
    ASSERT_EQ(nc_def_dim(nc, "time", NC_UNLIMITED, &dims[0]), NC_NOERR);
    ASSERT_EQ(nc_def_dim(nc, "reach", 5, &dims[1]), NC_NOERR);
    ASSERT_EQ(nc_put_att_text(nc, NC_GLOBAL, "Conventions", 6, "CF-1.8"), NC_NOERR);
    const double scale = 0.5;
    ASSERT_EQ(nc_put_att_double(nc, NC_GLOBAL, "scale", NC_DOUBLE, 1, &scale), NC_NOERR);
    ASSERT_EQ(nc_def_var(nc, "lateral", NC_FLOAT, 2, dims, &var), NC_NOERR);
    ASSERT_EQ(nc_put_att_text(nc, var, "units", 6, "m3 s-1"), NC_NOERR);
    const short fill = -1;
    ASSERT_EQ(nc_put_att_short(nc, var, "missing", NC_SHORT, 1, &fill), NC_NOERR);
    int ids = -1;
    ASSERT_EQ(nc_def_var(nc, "reach_id", NC_CHAR, 1, &dims[1], &ids), NC_NOERR);
    ASSERT_EQ(nc_close(nc), NC_NOERR);
    std::ifstream in(path, std::ios::binary);
    const std::vector<std::uint8_t> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    ASSERT_GT(bytes.size(), 4u);
    EXPECT_EQ(bytes[3], mode == NC_64BIT_DATA ? 5 : mode == NC_64BIT_OFFSET ? 2 : 1);
    EXPECT_FALSE(classicHeaderProblem(bytes)) << *classicHeaderProblem(bytes);
  }
}

namespace {

/// Opening the regression input `name` as forcing is refused with a message
/// naming the file and holding `words`.
void expectRegressionRefused(const std::string& name, const std::string& words) {
  const fs::path file = fs::path(REACHWISE_SOURCE_DIR) / "fuzz/regressions/forcing_netcdf" / name;
  try {
    reachwise::io::NetcdfForcingSource source(file, 1000);
    ADD_FAILURE() << name << " opened";
  } catch (const reachwise::InputError& e) {
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find(name), std::string::npos) << e.what();
  }
}

}  // namespace

TEST(NetcdfHeader, TheFileThatMadeNetcdfDivideByZeroIsRefused) {
  // Found by fuzzing (fuzz/regressions/forcing_netcdf/): a CDF-2 file whose
  // reach_id has type 12; netCDF-C 4.9.0 ended the process with SIGFPE.
  expectRegressionRefused("cdf2-string-variable-divides-by-zero.nc", "'reach_id' has type 12");
}

TEST(NetcdfHeader, TheFileThatClaimedAHundredMillionDimensionsIsRefused) {
  // Found by fuzzing (fuzz/regressions/forcing_netcdf/): a CDF-1 file of 796
  // bytes whose dimension list claims 100,663,296 entries; netCDF-C 4.9.0
  // crashed in NC_hashmapfree when its table for them could not be had.
  expectRegressionRefused("classic-header-claims-100m-dimensions.nc", "100663296 dimensions");
}
