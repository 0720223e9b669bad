// End-to-end: outputs never replace inputs, a failed run leaves nothing
// behind, and a GeoPackage a killed writer left with a rollback journal is
// recovered on open.
#include <gtest/gtest.h>

#include <gdal_priv.h>
#include <ogrsf_frmts.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <string>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const fs::path kSamples = REACHWISE_SOURCE_DIR "/sample-network";

testsupport::CliRun run(const std::string& args) { return testsupport::runReachwise(args); }

/// A copy of the sample network and forcing in `dir`.
void copySample(const fs::path& dir) {
  for (const char* f : {"network.gpkg", "inflow.csv", "lateral.csv"}) fs::copy_file(kSamples / f, dir / f);
}

}  // namespace

TEST(OutputSafety, AnOutputNeverReplacesAnInput) {
  const testsupport::TempDir tmp;
  const fs::path d = tmp.path();
  copySample(d);
  const std::string network = testsupport::slurp(d / "network.gpkg");
  const std::string inflow = testsupport::slurp(d / "inflow.csv");
  // check --problems onto the network it reads (also spelled differently).
  auto r = run("check " + (d / "network.gpkg").string() + " --problems " + (d / "." / "network.gpkg").string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("NETWORK"), std::string::npos) << r.err;
  // route --out, --series, --csv onto an input, even with --overwrite.
  const std::string base = "route " + (d / "network.gpkg").string() + " --inflow " + (d / "inflow.csv").string() +
                           " --quiet --overwrite ";
  r = run(base + "--out " + (d / "inflow.csv").string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("--inflow"), std::string::npos) << r.err;
  r = run(base + "--out " + (d / "r.gpkg").string() + " --series " + (d / "network.gpkg").string());
  EXPECT_EQ(r.code, 1);
  fs::copy_file(d / "inflow.csv", d / "hydrographs.csv");
  r = run("route " + (d / "network.gpkg").string() + " --inflow " + (d / "hydrographs.csv").string() +
          " --quiet --overwrite --out " + (d / "r.gpkg").string() + " --csv " + d.string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("--csv"), std::string::npos) << r.err;
  r = run(base + "--out " + (d / "r.gpkg").string() + " --report " + d.string());
  EXPECT_EQ(r.code, 1);
  EXPECT_EQ(testsupport::slurp(d / "network.gpkg"), network);
  EXPECT_EQ(testsupport::slurp(d / "inflow.csv"), inflow);
  EXPECT_FALSE(fs::exists(d / "r.gpkg"));
  // Write-back adds layers to the network itself: still allowed.
  r = run("route " + (d / "network.gpkg").string() + " --inflow " + (d / "inflow.csv").string() +
          " --quiet --write-back");
  EXPECT_EQ(r.code, 0) << r.err;
}

TEST(OutputSafety, AFailedRunLeavesNothingBehind) {
  const testsupport::TempDir tmp;
  const fs::path d = tmp.path();
  copySample(d);
  // The NetCDF's folder does not exist: the message names the path given,
  // not a temporary name, and the CSV folder made for the run goes again.
  auto r = run("route " + (d / "network.gpkg").string() + " --inflow " + (d / "inflow.csv").string() +
               " --quiet --out " + (d / "r.gpkg").string() + " --csv " + (d / "made" / "csv").string() +
               " --series " + (d / "nodir" / "s.nc").string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("does not exist"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("partial"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(d / "made"));
  EXPECT_FALSE(fs::exists(d / "r.gpkg"));
  r = run("route " + (d / "network.gpkg").string() + " --inflow " + (d / "inflow.csv").string() +
          " --quiet --out " + (d / "nodir" / "x.gpkg").string());
  EXPECT_EQ(r.code, 1);
  EXPECT_NE(r.err.find("the folder " + (d / "nodir").string() + " does not exist"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("partial"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("sqlite"), std::string::npos) << r.err;
  // synth: its GeoPackage does not stay when its NetCDF fails.
  r = run("synth " + (d / "s.gpkg").string() + " --reaches 50 --quiet --lateral " +
          (d / "nodir" / "l.nc").string());
  EXPECT_NE(r.code, 0);
  EXPECT_FALSE(fs::exists(d / "s.gpkg"));
  for (const auto& e : fs::directory_iterator(d))
    EXPECT_NE(e.path().filename().string()[0], '.') << "left behind: " << e.path();
}

namespace {

/// Kills a writer inside a transaction on `gpkg` (as a `--write-back`
/// killed with SIGKILL), leaving SQLite's rollback journal beside it.
void killWriterMidTransaction(const fs::path& gpkg) {
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    reachwise::io::ensureGdal();
    std::unique_ptr<GDALDataset> ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
    if (!ds) ::_exit(2);
    const std::string layer = ds->GetLayer(0)->GetName();
    ds->ExecuteSQL("PRAGMA cache_size = 1", nullptr, nullptr);  // spill the changes to the file at once
    ds->StartTransaction();
    ds->ExecuteSQL(("DELETE FROM \"" + layer + "\"").c_str(), nullptr, nullptr);
    ds->ExecuteSQL("CREATE TABLE filler (x BLOB)", nullptr, nullptr);
    for (int k = 0; k < 200; ++k)
      ds->ExecuteSQL("INSERT INTO filler VALUES (zeroblob(10000))", nullptr, nullptr);
    ::raise(SIGKILL);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  ASSERT_TRUE(WIFSIGNALED(status)) << "the writer did not die as planned";
  ASSERT_TRUE(fs::exists(gpkg.string() + "-journal")) << "no journal to recover";
}

}  // namespace

// The journal makes a read-only open fail until it is rolled back
// (sqlite.org, "Atomic Commit In SQLite", hot journals, from memory).
// check and route roll it back when they may write the file.
TEST(OutputSafety, AHotJournalIsRolledBackOnOpen) {
  const testsupport::TempDir tmp;
  const fs::path gpkg = tmp.path() / "network.gpkg";
  fs::copy_file(kSamples / "network.gpkg", gpkg);
  killWriterMidTransaction(gpkg);
  const auto r = run("check " + gpkg.string());
  EXPECT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.err.find("rolled back"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(gpkg.string() + "-journal"));
  // The 41 reaches of the sample (sample-network/README.md) are all there again.
  EXPECT_NE(r.out.find("41"), std::string::npos) << r.out;
}

// When the file may not be written, the error says what to do, and the
// journal (which holds the old pages) is left. Run as a user without write
// access: `nobody` through setpriv(1) when the tests run as root, else the
// file and its folder made read-only.
TEST(OutputSafety, AHotJournalOnAReadOnlyFileIsExplained) {
  const testsupport::TempDir tmp;
  const fs::path dir = tmp.path() / "ro";
  fs::create_directories(dir);
  const fs::path gpkg = dir / "network.gpkg";
  fs::copy_file(kSamples / "network.gpkg", gpkg);
  killWriterMidTransaction(gpkg);
  testsupport::CliRun r;
  if (::geteuid() == 0) {
    fs::permissions(tmp.path(), fs::perms::all, fs::perm_options::add);  // nobody may enter, not write in ro/
    fs::permissions(dir, fs::perms::others_read | fs::perms::others_exec, fs::perm_options::add);
    const std::string err = (tmp.path() / "err.txt").string();
    const std::string cmd = "setpriv --reuid=65534 --regid=65534 --clear-groups " REACHWISE_BINARY_DIR
                            "/reachwise check " + gpkg.string() + " > /dev/null 2> " + err;
    const int status = std::system(cmd.c_str());
    r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    r.err = testsupport::slurp(err);
  } else {
    fs::permissions(gpkg, fs::perms::owner_write, fs::perm_options::remove);
    fs::permissions(dir, fs::perms::owner_write, fs::perm_options::remove);
    r = run("check " + gpkg.string());
    fs::permissions(dir, fs::perms::owner_write, fs::perm_options::add);
  }
  EXPECT_EQ(r.code, 1) << r.err;
  EXPECT_NE(r.err.find("write access"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("-journal"), std::string::npos) << r.err;
  EXPECT_TRUE(fs::exists(gpkg.string() + "-journal"));
}

// Two processes routing into the same outputs at once: without
// --overwrite exactly one succeeds and the other is refused (never both
// exit 0 with one silently replacing the other); with --overwrite both
// succeed, one after the other (that the two sets never mix is checked with
// distinguishable contents in OutputCommit.ConcurrentCommitsNeverMixOrSilentlyReplace).
TEST(OutputSafety, TwoRunsOnTheSameOutputs) {
  const testsupport::TempDir tmp;
  const fs::path d = tmp.path();
  // A network large enough that routing takes a second or two, so that the
  // two runs overlap (both find the outputs missing when they start).
  const auto made = run("synth " + (d / "big.gpkg").string() + " --reaches 4000 --steps 48 --quiet --lateral " +
                        (d / "big.nc").string());
  ASSERT_EQ(made.code, 0) << made.err;
  const std::string route = std::string(REACHWISE_BINARY_DIR) + "/reachwise route " + (d / "big.gpkg").string() +
                            " --lateral " + (d / "big.nc").string() + " --quiet --out " + (d / "r.gpkg").string() +
                            " --csv " + (d / "csv").string();
  for (const bool overwrite : {false, true}) {
    std::error_code ec;
    fs::remove(d / "r.gpkg", ec);
    fs::remove_all(d / "csv", ec);
    const std::string one = route + (overwrite ? " --overwrite" : "");
    const std::string both = "(" + one + " 2> " + (d / "e1").string() + "; echo $? > " + (d / "x1").string() +
                             ") & (" + one + " 2> " + (d / "e2").string() + "; echo $? > " + (d / "x2").string() +
                             ") & wait";
    ASSERT_EQ(std::system(("sh -c '" + both + "'").c_str()), 0);
    const int x1 = std::stoi(testsupport::slurp(d / "x1")), x2 = std::stoi(testsupport::slurp(d / "x2"));
    if (overwrite) {
      EXPECT_EQ(x1, 0) << testsupport::slurp(d / "e1");
      EXPECT_EQ(x2, 0) << testsupport::slurp(d / "e2");
    } else {
      EXPECT_EQ(x1 + x2, 1) << testsupport::slurp(d / "e1") << testsupport::slurp(d / "e2");
      const std::string refused = testsupport::slurp(d / (x1 ? "e1" : "e2"));
      EXPECT_NE(refused.find("overwriting is allowed"), std::string::npos) << refused;
    }
    EXPECT_TRUE(fs::exists(d / "r.gpkg"));
    EXPECT_TRUE(fs::exists(d / "csv" / "hydrographs.csv"));
    for (const auto& e : fs::directory_iterator(d / "csv"))
      EXPECT_NE(e.path().filename().string()[0], '.') << "left behind: " << e.path();
  }
}
