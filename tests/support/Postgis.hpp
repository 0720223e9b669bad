#pragma once
// Test support: a database of its own on the test PostgreSQL/PostGIS server
// (docs/testing.md, "Database tests"). The server is the one CTest's fixture
// `pg_server` starts (scripts/pg-server.sh; its connection options in
// BUILD/pg/conninfo), or the one REACHWISE_TEST_PG names (libpq connection
// options of a role that may create databases).

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <stdexcept>
#include <string>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace testsupport {

/// libpq connection options of the test server, or "" when there is none.
inline std::string testServerConninfo() {
  if (const char* env = std::getenv("REACHWISE_TEST_PG"); env != nullptr && *env != '\0') return env;
  std::ifstream in(std::filesystem::path(REACHWISE_BINARY_DIR) / "pg" / "conninfo");
  std::string line;
  std::getline(in, line);
  return line;
}

/// An SQL identifier in double quotes (the test's own SQL; reachwise quotes its own).
inline std::string quotedIdentifier(const std::string& name) {
  std::string q = "\"";
  for (char c : name) q += c == '"' ? std::string("\"\"") : std::string(1, c);
  return q + "\"";
}

/// A fresh database with the postgis extension, dropped again at the end.
class TestDatabase {
public:
  TestDatabase() {
    server_ = testServerConninfo();
    if (server_.empty()) {
      throw std::runtime_error(
          "no test database server: run the tests through ctest (the fixture pg_server starts one with "
          "scripts/pg-server.sh) or set REACHWISE_TEST_PG to a server's connection options");
    }
    // One database per test and process (the name has a length limit of 63 bytes).
    name_ = "rw_test_" + std::to_string(std::hash<std::string>{}(uniqueTestName()));
    dropQuietly();
    runOn(server_, "create database \"" + name_ + "\"");
    conninfo_ = server_ + " dbname=" + name_;  // libpq: a later keyword overrides an earlier one
    sql("create extension postgis");
  }
  ~TestDatabase() { dropQuietly(); }
  TestDatabase(const TestDatabase&) = delete;
  TestDatabase& operator=(const TestDatabase&) = delete;

  const std::string& name() const { return name_; }
  /// libpq connection options of this database.
  const std::string& conninfo() const { return conninfo_; }
  /// The GDAL data source name of this database.
  std::string source() const { return "PG:" + conninfo_; }
  /// Runs SQL (psql, no psqlrc, unaligned tuples only); throws with psql's message on failure.
  std::string sql(const std::string& statement) const { return runOn(conninfo_, statement); }

private:
  static std::string runOn(const std::string& conninfo, const std::string& statement) {
    const CliRun r = runShell("psql " + shellQuoted(conninfo) + " -X -A -t -q -v ON_ERROR_STOP=1 -c " + shellQuoted(statement));
    if (r.code != 0) throw std::runtime_error("psql failed on `" + statement + "`: " + r.err);
    return r.out;
  }
  void dropQuietly() const {
    runShell("psql " + shellQuoted(server_) + " -X -q -c " + shellQuoted("drop database if exists \"" + name_ + "\" with (force)"));
  }

  std::string server_, name_, conninfo_;
};

}  // namespace testsupport
