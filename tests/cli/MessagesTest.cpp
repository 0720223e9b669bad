// Messages a user reads: problem locations to about a centimetre for the
// CRS, and the muskingum method on a layer without K naming the absent
// field rather than calling it out of range.
#include <gtest/gtest.h>

#include <filesystem>
#include <string>

#include "reachwise/run/Network.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

// A centimetre is 2 decimals in metres and 7 in degrees (1e-7 degree of
// latitude is 1.1 cm; common practice).
TEST(Messages, ProblemLocationsPrintToAboutACentimetre) {
  network::Problem p(network::ProblemCode::ProbableGap, "A gap.");
  p.reach_id = "R1";
  p.fid = 7;
  p.x = 512345.678912345;
  p.y = 5012345.1;
  EXPECT_EQ(run::problemLine(p), "error probable_gap R1 7 (512345.68, 5012345.10): A gap.");
  p.x = 15.123456789123;
  p.y = 47.98765432109;
  EXPECT_EQ(run::problemLine(p, true), "error probable_gap R1 7 (15.1234568, 47.9876543): A gap.");
}

TEST(Messages, MuskingumWithoutKNamesTheAbsentField) {
  testsupport::TempDir dir;
  const fs::path net = dir.path() / "net.gpkg", lat = dir.path() / "lat.nc";
  ASSERT_EQ(testsupport::runReachwise("synth " + net.string() + " --reaches 20 --steps 24 --quiet --lateral " +
                                      lat.string()).code, 0);
  const auto r = testsupport::runReachwise("route " + net.string() + " --lateral " + lat.string() +
                                           " --method muskingum --out " + (dir.path() / "o.gpkg").string());
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("muskingum_k_h"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("is absent"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("must be > 0"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(dir.path() / "o.gpkg"));
}
