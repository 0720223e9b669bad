// The packed spatial index, checked against SQLite itself: its R-tree
// module's own consistency check (rtreecheck(), SQLite 3.24+), and the same
// window queries answered by an R-tree that SQLite built one insert at a
// time from the same boxes (an independent implementation of the index).
#include <gtest/gtest.h>
#include <sqlite3.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <set>
#include <string>
#include <vector>

#include "../../src/io/PackedRtree.hpp"

namespace {

using reachwise::io::fillPackedRtree;
using reachwise::io::RtreeBox;
using reachwise::io::rtreeBox;

struct Db {
  sqlite3* db = nullptr;
  Db() { EXPECT_EQ(sqlite3_open(":memory:", &db), SQLITE_OK); }
  ~Db() { sqlite3_close(db); }
  void exec(const std::string& sql) const {
    char* error = nullptr;
    EXPECT_EQ(sqlite3_exec(db, sql.c_str(), nullptr, nullptr, &error), SQLITE_OK) << (error ? error : "") << ": " << sql;
    sqlite3_free(error);
  }
  std::string text(const std::string& sql) const {
    sqlite3_stmt* s = nullptr;
    EXPECT_EQ(sqlite3_prepare_v2(db, sql.c_str(), -1, &s, nullptr), SQLITE_OK) << sql;
    std::string out;
    if (s && sqlite3_step(s) == SQLITE_ROW && sqlite3_column_text(s, 0))
      out = reinterpret_cast<const char*>(sqlite3_column_text(s, 0));
    sqlite3_finalize(s);
    return out;
  }
  std::set<std::int64_t> ids(const std::string& sql) const {
    sqlite3_stmt* s = nullptr;
    EXPECT_EQ(sqlite3_prepare_v2(db, sql.c_str(), -1, &s, nullptr), SQLITE_OK) << sql;
    std::set<std::int64_t> out;
    while (s && sqlite3_step(s) == SQLITE_ROW) out.insert(sqlite3_column_int64(s, 0));
    sqlite3_finalize(s);
    return out;
  }
};

/// `n` boxes, points and small rectangles, scattered over a projected
/// extent (metres) like a national network's, ids 1..n.
std::vector<RtreeBox> randomBoxes(std::size_t n, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> x(3.0e5, 2.2e6), y(5.0e6, 6.9e6), size(0.0, 3000.0);
  std::vector<RtreeBox> boxes;
  for (std::size_t i = 0; i < n; ++i) {
    const double x0 = x(rng), y0 = y(rng);
    const bool point = i % 2 == 0;
    boxes.push_back(rtreeBox(static_cast<std::int64_t>(i + 1), x0, point ? x0 : x0 + size(rng), y0,
                             point ? y0 : y0 + size(rng)));
  }
  return boxes;
}

std::string window(double x0, double x1, double y0, double y1) {
  return " WHERE maxx >= " + std::to_string(x0) + " AND minx <= " + std::to_string(x1) + " AND maxy >= " +
         std::to_string(y0) + " AND miny <= " + std::to_string(y1);
}

TEST(PackedRtree, SqliteFindsItConsistentAndAnswersAsItsOwnTree) {
  // 0 and 1 boxes: the root alone; 51 fills the root of SQLite's 1228-byte
  // nodes (4 kB pages), 52 needs a second level, 2,601 = 51² fills two
  // levels and 20,000 needs three.
  for (const std::size_t n : {0u, 1u, 51u, 52u, 2601u, 2602u, 20000u}) {
    SCOPED_TRACE("boxes: " + std::to_string(n));
    const Db db;
    db.exec("CREATE VIRTUAL TABLE packed USING rtree(id, minx, maxx, miny, maxy)");
    db.exec("CREATE VIRTUAL TABLE grown USING rtree(id, minx, maxx, miny, maxy)");
    const auto boxes = randomBoxes(n, 7 + n);
    ASSERT_TRUE(fillPackedRtree(db.db, "packed", boxes)) << sqlite3_errmsg(db.db);
    sqlite3_stmt* insert = nullptr;
    ASSERT_EQ(sqlite3_prepare_v2(db.db, "INSERT INTO grown VALUES (?, ?, ?, ?, ?)", -1, &insert, nullptr), SQLITE_OK);
    for (const auto& b : boxes) {
      sqlite3_bind_int64(insert, 1, b.id);
      sqlite3_bind_double(insert, 2, b.min_x);
      sqlite3_bind_double(insert, 3, b.max_x);
      sqlite3_bind_double(insert, 4, b.min_y);
      sqlite3_bind_double(insert, 5, b.max_y);
      ASSERT_EQ(sqlite3_step(insert), SQLITE_DONE);
      sqlite3_reset(insert);
    }
    sqlite3_finalize(insert);

    EXPECT_EQ(db.text("SELECT rtreecheck('packed')"), "ok");
    EXPECT_EQ(db.text("SELECT count(*) FROM packed"), std::to_string(n));
    // Every box comes back as stored, by id.
    EXPECT_EQ(db.ids("SELECT p.id FROM packed p JOIN grown g ON p.id = g.id AND p.minx = g.minx AND "
                     "p.maxx = g.maxx AND p.miny = g.miny AND p.maxy = g.maxy").size(), n);
    std::mt19937_64 rng(n);
    std::uniform_real_distribution<double> x(3.0e5, 2.2e6), y(5.0e6, 6.9e6), size(1.0e3, 3.0e5);
    for (int q = 0; q < 40; ++q) {
      const double x0 = x(rng), y0 = y(rng), w = size(rng), h = size(rng);
      const std::string where = window(x0, x0 + w, y0, y0 + h);
      EXPECT_EQ(db.ids("SELECT id FROM packed" + where), db.ids("SELECT id FROM grown" + where)) << where;
    }
    // SQLite keeps editing the packed tree as its own: inserts that split
    // full nodes and deletes that empty others leave it consistent.
    for (std::size_t i = 0; i < n; i += 3) db.exec("DELETE FROM packed WHERE id = " + std::to_string(i + 1));
    for (int i = 0; i < 500; ++i)
      db.exec("INSERT INTO packed VALUES (" + std::to_string(1000000 + i) + ", " + std::to_string(4.0e5 + 97.0 * i) +
              ", " + std::to_string(4.0e5 + 97.0 * i + 10) + ", 5.5e6, 5.5e6)");
    EXPECT_EQ(db.text("SELECT rtreecheck('packed')"), "ok");
    EXPECT_EQ(db.text("SELECT count(*) FROM packed"), std::to_string(n - (n + 2) / 3 + 500));
  }
}

TEST(PackedRtree, BoxesHoldTheirFeatureAfterRoundingToFloats) {
  // The R-tree stores 32-bit floats: a minimum rounded up or a maximum
  // rounded down would let a window query miss the feature (common
  // practice: SQLite and GDAL round outwards).
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> v(-2.0e7, 2.0e7);
  for (int i = 0; i < 100000; ++i) {
    const double a = v(rng), b = a + std::abs(v(rng)) * 1e-6;
    const RtreeBox box = rtreeBox(i, a, b, -b, -a);
    ASSERT_LE(static_cast<double>(box.min_x), a);
    ASSERT_GE(static_cast<double>(box.max_x), b);
    ASSERT_LE(static_cast<double>(box.min_y), -b);
    ASSERT_GE(static_cast<double>(box.max_y), -a);
    // and no wider than one float step
    ASSERT_EQ(std::nextafter(box.min_x, std::numeric_limits<float>::infinity()) > a, true);
    ASSERT_EQ(std::nextafter(box.max_x, -std::numeric_limits<float>::infinity()) < b, true);
  }
}

}  // namespace
