// `route --series` onto a full file system: the error is reported, the
// program exits with status 1 (not a crash at exit) and leaves nothing on
// that file system. The full file system is a tiny tmpfs mounted in a
// private mount namespace (`unshare -m` as root, `unshare -rm` otherwise),
// so nothing stays mounted after the test. Where no tmpfs can be mounted
// the test fails under CI (CI=true) and is skipped, saying so, elsewhere;
// tests/io/NetcdfFullDiskTest.cpp covers the same with a file size limit,
// which needs no privilege.
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <string>

#include <gtest/gtest.h>

#include "support/Cli.hpp"

namespace fs = std::filesystem;
using testsupport::CliRun;
using testsupport::slurp;

namespace {

const std::string kSample = std::string(REACHWISE_SOURCE_DIR) + "/sample-network/";

/// Runs `command` under `sh -c` inside a new mount namespace where a tmpfs
/// of `size` is mounted on `dir`. The shell exits 77 when the mount fails.
CliRun inTinyTmpfs(const fs::path& dir, const std::string& size, const std::string& command,
                   const fs::path& scratch) {
  const std::string unshare = geteuid() == 0 ? "unshare -m" : "unshare -rm";
  const std::string script = "mount -t tmpfs -o size=" + size + " tmpfs '" + dir.string() +
                             "' 2>/dev/null || exit 77; " + command;
  const fs::path out = scratch / "stdout", err = scratch / "stderr";
  const std::string line = unshare + " sh -c \"" + script + "\" > '" + out.string() + "' 2> '" + err.string() + "'";
  const int status = std::system(line.c_str());
  CliRun r;
  r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  return r;
}

bool onCi() {
  const char* ci = std::getenv("CI");
  return ci && std::string(ci) == "true";
}

TEST(FullDiskTest, SeriesOntoAFullFileSystemIsAnErrorNotACrash) {
  testsupport::TempDir tmp;
  const fs::path mnt = tmp.path() / "full";
  fs::create_directories(mnt);
  // Can a tmpfs be mounted here at all?
  const CliRun probe = inTinyTmpfs(mnt, "64k", "true", tmp.path());
  if (probe.code != 0) {
    const std::string why = "cannot mount a tmpfs in a private mount namespace here (unshare/mount exit " +
                            std::to_string(probe.code) + ": " + probe.err +
                            "); the full-disk case is then covered only by NetcdfFullDiskTest's file size limit";
    if (onCi()) FAIL() << why;
    GTEST_SKIP() << why;
  }
  // The sample run's series file takes about 140 kB; 64 kB cannot hold it.
  const std::string command = std::string(REACHWISE_BINARY_DIR) + "/reachwise route " + kSample +
                              "network.gpkg --inflow " + kSample + "inflow.csv --lateral " + kSample +
                              "lateral.csv --quiet --out " + (tmp.path() / "results.gpkg").string() +
                              " --series " + (mnt / "series.nc").string() + "; echo exit=\\$? >&2; ls -A " +
                              mnt.string();
  const CliRun r = inTinyTmpfs(mnt, "64k", command, tmp.path());
  // Exit 1 (bad input or output), not 139 (SIGSEGV in HDF5's exit handler).
  EXPECT_NE(r.err.find("exit=1\n"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find((mnt / "series.nc").string()), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("no space left"), std::string::npos) << r.err;
  EXPECT_EQ(r.out, "") << "the full file system is left empty";
}

}  // namespace
