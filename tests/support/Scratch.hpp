#pragma once
// Test support: folders unique to the running test, and a UTC reference clock.

#include <gtest/gtest.h>

#include <ctime>
#include <cstdint>
#include <filesystem>
#include <string>
#include <system_error>
#include <vector>

#include <unistd.h>

namespace testsupport {

/// Name unique to the running test and process, so tests can run in parallel.
inline std::string uniqueTestName() {
  const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
  std::string name = std::string("reachwise_") + info->test_suite_name() + "_" + info->name() + "_" +
                     std::to_string(::getpid());
  for (char& c : name)
    if (c == '/') c = '_';  // parameterised names
  return name;
}

/// A folder under the system temp dir, unique per test, removed afterwards.
class TempDir {
public:
  TempDir() : path_(std::filesystem::temp_directory_path() / uniqueTestName()) {
    std::filesystem::remove_all(path_);
    std::filesystem::create_directories(path_);
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path_, ec);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::filesystem::path& path() const { return path_; }
  std::string file(const std::string& name) const { return (path_ / name).string(); }

private:
  std::filesystem::path path_;
};

/// The running test's scratch folder for helpers that are not fixtures:
/// created on first use in a test, removed when the process ends.
inline std::filesystem::path testScratchDir() {
  struct Registry {
    std::vector<std::filesystem::path> dirs;
    ~Registry() {
      std::error_code ec;
      for (const auto& d : dirs) std::filesystem::remove_all(d, ec);
    }
  };
  static Registry registry;
  const std::filesystem::path p = std::filesystem::temp_directory_path() / uniqueTestName();
  for (const auto& d : registry.dirs)
    if (d == p) return p;
  std::filesystem::remove_all(p);
  std::filesystem::create_directories(p);
  registry.dirs.push_back(p);
  return p;
}

/// Epoch seconds of a UTC wall-clock time by glibc's timegm, a reference
/// independent of the project's own time parsing.
inline std::int64_t utcSeconds(int y, int mo, int d, int h, int mi = 0, int s = 0) {
  std::tm tm{};
  tm.tm_year = y - 1900;
  tm.tm_mon = mo - 1;
  tm.tm_mday = d;
  tm.tm_hour = h;
  tm.tm_min = mi;
  tm.tm_sec = s;
  return static_cast<std::int64_t>(timegm(&tm));
}

}  // namespace testsupport
