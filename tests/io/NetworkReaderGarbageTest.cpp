// Seeded random garbage: the reader reports problems or throws a typed
// error, and never crashes or hands on an unusable record.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <limits>
#include <random>

#include "io/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkReader.hpp"

using namespace reachwise;

namespace {

std::string randomText(std::mt19937& rng) {
  static const char* pool[] = {"", " ", "0", "-1", "0.03", "1e308", "1e-320", "nan", "inf",
                               "-inf", "abc", "3 m", "0x10", "R1", "R2", "R1;R2", "circle",
                               "trapezoid", "CIRCLE", "2.5", "-0", "99999999999999999999"};
  return pool[rng() % (sizeof(pool) / sizeof(pool[0]))];
}

double randomCoord(std::mt19937& rng) {
  switch (rng() % 10) {
    case 0: return std::numeric_limits<double>::quiet_NaN();
    case 1: return std::numeric_limits<double>::infinity();
    case 2: return 0.0;
    default: return std::uniform_real_distribution<double>(-50, 50)(rng);
  }
}

OGRGeometry* randomGeometry(std::mt19937& rng) {
  const int kind = static_cast<int>(rng() % 8);
  if (kind == 0) return nullptr;
  if (kind == 1) return new OGRLineString();  // empty
  if (kind == 2) return new OGRPoint(randomCoord(rng), randomCoord(rng));
  if (kind == 3) {
    auto* poly = new OGRPolygon();
    auto* ring = new OGRLinearRing();
    for (int i = 0; i < 4; ++i) ring->addPoint(randomCoord(rng), randomCoord(rng));
    poly->addRingDirectly(ring);
    return poly;
  }
  auto randomLine = [&](int max_pts) {
    auto* l = new OGRLineString();
    const int n = static_cast<int>(rng() % max_pts);
    for (int i = 0; i < n; ++i) {
      if (rng() % 2)
        l->addPoint(randomCoord(rng), randomCoord(rng), randomCoord(rng));
      else
        l->addPoint(randomCoord(rng), randomCoord(rng));
    }
    return l;
  };
  if (kind == 4) {
    auto* m = new OGRMultiLineString();
    for (int k = static_cast<int>(rng() % 4); k > 0; --k) m->addGeometryDirectly(randomLine(4));
    return m;
  }
  return randomLine(6);
}

void writeGarbage(const std::string& path, std::uint32_t seed) {
  std::mt19937 rng(seed);
  reachwise::io::ensureGdal();
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(drv->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(rng() % 2 ? 32633 : 4326);
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbUnknown, nullptr);
  // Every attribute as text, so numeric fields can hold words; now and
  // then a field (required ones included) is left out.
  for (auto name : reachwise::io::kFieldNames) {
    if (name != "reach_id" && rng() % 12 == 0) continue;
    OGRFieldDefn def(std::string(name).c_str(), OFTString);
    layer->CreateField(&def);
  }
  const int features = static_cast<int>(rng() % 40);
  for (int i = 0; i < features; ++i) {
    OGRFeature f(layer->GetLayerDefn());
    for (int k = 0; k < f.GetFieldCount(); ++k) {
      if (rng() % 4 == 0) continue;
      f.SetField(k, randomText(rng).c_str());
    }
    if (rng() % 3 == 0) f.SetField(0, ("G" + std::to_string(i)).c_str());
    f.SetGeometryDirectly(randomGeometry(rng));
    // Some garbage may be refused by the writer; what was written is what is read.
    if (layer->CreateFeature(&f) != OGRERR_NONE) continue;
  }
}

}  // namespace

TEST(NetworkReaderGarbage, NeverCrashesAndKeepsOnlyUsableRecords) {
  fixtures::TempDir dir;
  std::size_t records = 0, problem_count = 0, errors = 0;
  for (std::uint32_t seed = 1; seed <= 60; ++seed) {
    SCOPED_TRACE("seed " + std::to_string(seed));
    const std::string path = dir.file("g" + std::to_string(seed) + ".gpkg");
    writeGarbage(path, seed);
    for (auto topology : {io::TopologySource::Auto, io::TopologySource::Geometry}) {
      io::ReadOptions opt;
      opt.config.topology = topology;
      opt.config.orientation = seed % 2 ? io::Orientation::Outlets : io::Orientation::Auto;
      network::ProblemList problems;
      try {
        const auto t = io::readNetwork(path, opt, problems);
        records += t.reaches.size();
        problem_count += problems.size();
        for (const auto& r : t.reaches) {
          EXPECT_FALSE(r.id.empty());
          ASSERT_GE(r.line.size(), 2u) << r.id;
          for (const auto& p : r.line) {
            EXPECT_TRUE(std::isfinite(p.x) && std::isfinite(p.y)) << r.id;
          }
        }
      } catch (const reachwise::Error& e) {
        // A typed error is an accepted outcome (e.g. a required field the
        // garbage left empty is fine, but an unknown layer type is not):
        // it must carry the file name.
        EXPECT_NE(std::string(e.what()).find(path), std::string::npos) << e.what();
        ++errors;
      }
    }
  }
  // The garbage reached every path: usable records, problems and refusals.
  EXPECT_GT(records, 0u);
  EXPECT_GT(problem_count, 0u);
  EXPECT_GT(errors, 0u);
  std::printf("garbage: %zu records kept, %zu problems, %zu typed errors\n", records,
              problem_count, errors);
}
