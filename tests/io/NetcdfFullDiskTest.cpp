// A NetCDF output whose writing fails for want of room (a file size limit
// here, a full file system in tests/cli/FullDiskTest.cpp) is an error the
// program reports and exits from with status 1: nothing of the file stays
// open in the HDF5 library, whose exit handler crashes (SIGSEGV) on a file
// left half-closed.
#include "support/Scratch.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"

#include <signal.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <functional>
#include <iostream>

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

/// A forcing of `reaches` series of `steps` distinct values (they do not
/// compress away, so the file needs about 8 × reaches × steps bytes).
Forcing bigForcing(std::size_t reaches, std::size_t steps) {
  Forcing f;
  f.axis = routing::TimeAxis::make(1777593600, 3600, steps);
  for (std::size_t r = 0; r < reaches; ++r) {
    std::vector<double> q(steps);
    for (std::size_t k = 0; k < steps; ++k) q[k] = 1.0 + 0.001 * static_cast<double>(r * steps + k) + 1e-7 * static_cast<double>(k * k);
    f.lateral["R" + std::to_string(r)] = std::move(q);
  }
  return f;
}

/// Runs `body` in a child process whose files may not grow beyond
/// `limit_bytes` (RLIMIT_FSIZE; SIGXFSZ ignored, so a write past it fails
/// with EFBIG as it would with ENOSPC). The child ends through exit(),
/// which runs the libraries' exit handlers, with `body`'s status. Returns
/// the raw wait status.
int inChildWithFileLimit(rlim_t limit_bytes, const std::function<int()>& body) {
  std::cout.flush();
  std::cerr.flush();
  const pid_t pid = fork();
  if (pid == 0) {
    signal(SIGXFSZ, SIG_IGN);
    const rlimit limit{limit_bytes, limit_bytes};
    if (setrlimit(RLIMIT_FSIZE, &limit) != 0) _exit(90);
    int code = 91;
    try {
      code = body();
    } catch (...) {
      code = 92;
    }
    std::exit(code);
  }
  int status = 0;
  waitpid(pid, &status, 0);
  return status;
}

std::string describe(int status) {
  if (WIFSIGNALED(status)) return "killed by signal " + std::to_string(WTERMSIG(status));
  return "exit status " + std::to_string(WEXITSTATUS(status));
}

class NetcdfFullDiskTest : public ::testing::Test {
protected:
  std::size_t filesInDir() const {
    return static_cast<std::size_t>(std::distance(fs::directory_iterator(dir_), fs::directory_iterator()));
  }
  testsupport::TempDir tmp_;
  const fs::path dir_ = tmp_.path();
};

TEST_F(NetcdfFullDiskTest, WriterThatCannotFinishReportsAndExitsCleanly) {
  // 200 series of 2000 doubles: 3.2 MB of values against a 256 KiB limit,
  // so the data cannot all reach the file.
  const fs::path out = dir_ / "forcing.nc";
  const Forcing f = bigForcing(200, 2000);
  const int status = inChildWithFileLimit(256 * 1024, [&] {
    try {
      writeForcingNetcdf(out, f);
    } catch (const InputError& e) {
      // The error names the final file, not the temporary one.
      return e.where().file == out.string() ? 1 : 93;
    }
    return 0;  // no error: the limit did not bite
  });
  // Exit status 1: the error was reported and the process ended normally
  // (before the fix: killed by SIGSEGV in HDF5's exit handler).
  EXPECT_TRUE(WIFEXITED(status)) << describe(status);
  EXPECT_EQ(WEXITSTATUS(status), 1) << describe(status);
  EXPECT_FALSE(fs::exists(out));
  EXPECT_EQ(filesInDir(), 0u) << "the temporary file is removed";
}

TEST_F(NetcdfFullDiskTest, WriterAbandonedAfterFailedWritesExitsCleanly) {
  // Writing goes on until a write fails or all is written; then the
  // writer is destroyed unfinished (the path an exception takes).
  const fs::path out = dir_ / "abandoned.nc";
  const Forcing f = bigForcing(200, 2000);
  const int status = inChildWithFileLimit(256 * 1024, [&] {
    std::vector<std::string> ids;
    for (const auto& entry : f.lateral) ids.push_back(entry.first);
    NetcdfForcingWriter writer(out, f.axis, ids, false, true);
    try {
      for (std::size_t r = 0; r < ids.size(); ++r) writer.write(ForcingKind::Lateral, r, f.lateral.at(ids[r]));
    } catch (const InputError&) {
    }
    return 1;  // the writer is destroyed unfinished here
  });
  EXPECT_TRUE(WIFEXITED(status)) << describe(status);
  EXPECT_EQ(WEXITSTATUS(status), 1) << describe(status);
  EXPECT_EQ(filesInDir(), 0u) << "the temporary file is removed";
}

TEST_F(NetcdfFullDiskTest, WriterWithRoomStillWritesTheFile) {
  // The same forcing with room enough: the limit is not what makes it fail.
  const fs::path out = dir_ / "fits.nc";
  const Forcing f = bigForcing(200, 2000);
  const int status = inChildWithFileLimit(64 * 1024 * 1024, [&] {
    writeForcingNetcdf(out, f);
    return readForcingNetcdf(out).lateral == f.lateral ? 0 : 94;
  });
  EXPECT_TRUE(WIFEXITED(status)) << describe(status);
  EXPECT_EQ(WEXITSTATUS(status), 0) << describe(status);
}

}  // namespace
