// `route --report-reaches`: the reaches a user names get hydrograph panels
// of their own in the report, in the order given; unknown ids and the
// option without a report are refused before routing.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kRun = "route " + kSample + "network.gpkg --inflow " + kSample + "inflow.csv --lateral " + kSample +
                         "lateral.csv --quiet";

}  // namespace

TEST(ReportReaches, NamedReachesGetPanelsInTheOrderGiven) {
  testsupport::TempDir dir;
  const fs::path rep = dir.path() / "rep";
  const auto r = testsupport::runReachwise(kRun + " --out " + (dir.path() / "o.gpkg").string() + " --report " +
                                           rep.string() + " --report-reaches \"R13, R5,R13\"");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_TRUE(fs::exists(rep / "reach-1.svg"));
  EXPECT_TRUE(fs::exists(rep / "reach-2.svg"));
  EXPECT_FALSE(fs::exists(rep / "reach-3.svg"));  // the repeat is dropped
  const std::string page = testsupport::slurp(rep / "index.html");
  const auto section = page.find("Hydrographs at the reaches asked for");
  ASSERT_NE(section, std::string::npos);
  const auto r13 = page.find("Reach R13", section), r5 = page.find("Reach R5", section);
  ASSERT_NE(r13, std::string::npos);
  ASSERT_NE(r5, std::string::npos);
  EXPECT_LT(r13, r5);

  // The same from the run file.
  std::ofstream(dir.path() / "run.toml") << "[route]\nreport_reaches = [\"R5\"]\n";
  const fs::path rep2 = dir.path() / "rep2";
  const auto f = testsupport::runReachwise(kRun + " --out " + (dir.path() / "o2.gpkg").string() + " --report " +
                                           rep2.string() + " --config " + (dir.path() / "run.toml").string());
  ASSERT_EQ(f.code, 0) << f.err;
  EXPECT_TRUE(fs::exists(rep2 / "reach-1.svg"));
  EXPECT_FALSE(fs::exists(rep2 / "reach-2.svg"));
}

TEST(ReportReaches, UnknownIdsAndNoReportAreRefusedBeforeRouting) {
  testsupport::TempDir dir;
  const fs::path out = dir.path() / "o.gpkg", rep = dir.path() / "rep";
  const auto unknown = testsupport::runReachwise(kRun + " --out " + out.string() + " --report " + rep.string() +
                                                 " --report-reaches R13,NOPE,ALSO");
  EXPECT_EQ(unknown.code, 1);
  EXPECT_NE(unknown.err.find("NOPE, ALSO"), std::string::npos) << unknown.err;
  EXPECT_NE(unknown.err.find("report_reaches"), std::string::npos) << unknown.err;
  EXPECT_FALSE(fs::exists(out));
  EXPECT_FALSE(fs::exists(rep));
  const auto no_report = testsupport::runReachwise(kRun + " --out " + out.string() + " --report-reaches R13");
  EXPECT_EQ(no_report.code, 1);
  EXPECT_NE(no_report.err.find("--report DIR"), std::string::npos) << no_report.err;
  EXPECT_FALSE(fs::exists(out));
}
