// Lake input: field names and defaults from [network.lake_fields], and
// level–area / level–storage tables (io::readLakes). Storage checks use the
// analytic storage of a prismatic lake (S = A d) and of a frustum whose area
// grows linearly with level (S = A0 d + ½ (dA/dh) d², the integral of
// A0 + (dA/dh) z from 0 to d).
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <fstream>
#include <functional>
#include <map>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/LakeReader.hpp"
#include "reachwise/io/NetworkConfig.hpp"
#include "support/Scratch.hpp"
#include "support/Errors.hpp"

using namespace reachwise;
using network::Point2;

namespace {

/// One lake: its ring and any fields (numbers and text by name).
struct Feature {
  std::vector<Point2> ring;
  std::map<std::string, double> numbers;
  std::map<std::string, std::string> texts;
};

std::vector<Point2> square(Point2 c, double half) {
  return {{c.x - half, c.y - half}, {c.x + half, c.y - half}, {c.x + half, c.y + half}, {c.x - half, c.y + half}};
}

/// A lakes layer in EPSG:32633 (metres) with the fields the features use.
void writeLayer(const std::string& path, const std::vector<Feature>& features) {
  GDALAllRegister();
  auto* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(driver->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  ASSERT_TRUE(ds);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("lakes", &srs, wkbPolygon, nullptr);
  ASSERT_NE(layer, nullptr);
  std::map<std::string, OGRFieldType> fields;
  for (const auto& f : features) {
    for (const auto& [name, v] : f.numbers) fields.emplace(name, OFTReal);
    for (const auto& [name, v] : f.texts) fields.emplace(name, OFTString);
  }
  for (const auto& [name, type] : fields) {
    OGRFieldDefn d(name.c_str(), type);
    ASSERT_EQ(layer->CreateField(&d), OGRERR_NONE);
  }
  for (const auto& spec : features) {
    OGRFeature f(layer->GetLayerDefn());
    for (const auto& [name, value] : spec.numbers) f.SetField(name.c_str(), value);
    for (const auto& [name, value] : spec.texts) f.SetField(name.c_str(), value.c_str());
    OGRLinearRing ring;
    for (const auto& p : spec.ring) ring.addPoint(p.x, p.y);
    ring.closeRings();
    OGRPolygon poly;
    poly.addRing(&ring);
    f.SetGeometry(&poly);
    ASSERT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
}

void writeText(const std::filesystem::path& path, const std::string& text) { std::ofstream(path) << text; }

using testsupport::contains;
using testsupport::errorOf;

io::LakeReadOptions withFields(const std::string& toml, const std::string& origin = "run.toml") {
  io::LakeReadOptions o;
  o.fields = io::NetworkConfig::fromString(toml, origin).lake_fields;
  return o;
}

}  // namespace

TEST(LakeInput, FieldsMappedAndDefaulted) {
  testsupport::TempDir dir;
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLayer(path, {{square({0, 0}, 100), {{"CREST", 50}, {"LEN", 12}}, {{"NAME", "W1"}}},
                    {square({1000, 0}, 100), {{"CREST", 60}, {"LEN", 8}, {"C", 1.6}}, {{"NAME", "W2"}}},
                    {square({2000, 0}, 100), {}, {{"NAME", "K1"}}}});
  const auto options = withFields(R"(
[network.lake_fields]
lake_id = "NAME"
crest_level_m = "CREST"
weir_length_m = { name = "LEN" }
weir_coefficient = { name = "C", default = 1.8 }
k_h = { default = 12 }
)");
  const auto table = io::readLakes(path, options);
  ASSERT_EQ(table.lakes.size(), 3u);
  const auto& w1 = table.lakes[0];
  EXPECT_EQ(w1.lake_id, "W1");
  ASSERT_EQ(w1.rule.kind, routing::OutflowRule::Kind::Weir);
  EXPECT_EQ(w1.rule.crest_level_m, 50.0);
  EXPECT_EQ(w1.rule.weir_length_m, 12.0);
  EXPECT_EQ(w1.rule.weir_coefficient, 1.8) << "null in the feature: the default";
  EXPECT_EQ(table.lakes[1].rule.weir_coefficient, 1.6) << "the feature's own value wins";
  // The third lake names no rule of its own: the default k_h gives it one;
  // the weir lakes keep their weir (a default does not add a second rule).
  const auto& k1 = table.lakes[2];
  ASSERT_EQ(k1.rule.kind, routing::OutflowRule::Kind::Linear);
  EXPECT_EQ(k1.rule.k_s, 12 * 3600.0);
}

TEST(LakeInput, DefaultsFillInTheChosenRule) {
  testsupport::TempDir dir;
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLayer(path, {{square({0, 0}, 100), {{"crest_level_m", 5}}, {{"lake_id", "A"}}},
                    {square({1000, 0}, 100), {}, {{"lake_id", "B"}}}});
  // A default weir length completes A's weir; B takes the whole default weir.
  const auto table = io::readLakes(path, withFields(R"(
[network.lake_fields]
crest_level_m = { default = 7 }
weir_length_m = { default = 20 }
bottom_level_m = { default = 2 }
)"));
  ASSERT_EQ(table.lakes.size(), 2u);
  EXPECT_EQ(table.lakes[0].rule.crest_level_m, 5.0);
  EXPECT_EQ(table.lakes[0].rule.weir_length_m, 20.0);
  EXPECT_EQ(table.lakes[1].rule.crest_level_m, 7.0);
  EXPECT_EQ(table.lakes[1].rule.weir_length_m, 20.0);
  EXPECT_EQ(table.lakes[1].bottom_level_m, 2.0);
}

TEST(LakeInput, MappedFieldErrorsNameTheSourceField) {
  testsupport::TempDir dir;
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLayer(path, {{square({0, 0}, 100), {{"CREST", 50}}, {{"NAME", "W1"}, {"LEN", "wide"}}}});
  // A field named in the run file that the layer lacks.
  std::string e = errorOf([&] {
    io::readLakes(path, withFields("[network.lake_fields]\nlake_id = \"NAME\"\nk_h = \"K\"\n"));
  });
  EXPECT_TRUE(contains(e, "lakes.gpkg") && contains(e, "field K") && contains(e, "network.lake_fields.k_h")) << e;
  // A value that is not a number, in a mapped field: the lake and the source field.
  e = errorOf([&] {
    io::readLakes(path, withFields("[network.lake_fields]\nlake_id = \"NAME\"\ncrest_level_m = \"CREST\"\n"
                                   "weir_length_m = \"LEN\"\n"));
  });
  EXPECT_TRUE(contains(e, "lake W1") && contains(e, "field LEN") && contains(e, "not a number")) << e;
  // The id field renamed but absent.
  e = errorOf([&] { io::readLakes(path, withFields("[network.lake_fields]\nlake_id = \"CODE\"\n")); });
  EXPECT_TRUE(contains(e, "field CODE")) << e;
}

TEST(LakeInput, RunFileKeysChecked) {
  const auto error = [](const std::string& toml) {
    return errorOf([&] { (void)io::NetworkConfig::fromString(toml, "run.toml"); });
  };
  std::string e = error("[network.lake_fields]\ncrest = \"C\"\n");
  EXPECT_TRUE(contains(e, "run.toml") && contains(e, "network.lake_fields.crest") && contains(e, "unknown")) << e;
  e = error("[network.lake_fields]\nweir_coefficient = { default = \"high\" }\n");
  EXPECT_TRUE(contains(e, "network.lake_fields.weir_coefficient.default") && contains(e, "number")) << e;
  e = error("[network.lake_fields]\noutflow_table = { default = 3 }\n");
  EXPECT_TRUE(contains(e, "network.lake_fields.outflow_table.default")) << e;
  e = error("[network.lake_fields]\nlake_id = { default = \"L\" }\n");
  EXPECT_TRUE(contains(e, "network.lake_fields.lake_id.default")) << e;
  e = error("[network.lake_fields]\nk_h = { nme = \"K\" }\n");
  EXPECT_TRUE(contains(e, "network.lake_fields.k_h.nme")) << e;
  e = error("[network]\nlake_fields = 3\n");
  EXPECT_TRUE(contains(e, "network.lake_fields") && contains(e, "table")) << e;
  // A table file named as a default is taken from the run file's folder.
  const auto cfg = io::NetworkConfig::fromString("[network.lake_fields]\noutflow_table = { default = \"r.csv\" }\n",
                                                 "/data/case/run.toml");
  EXPECT_EQ(cfg.lakeField("outflow_table").default_text.value_or(""), "/data/case/r.csv");
  EXPECT_EQ(cfg.lakeField("k_h").name, "k_h");
}

// A level–area table of constant area is the prismatic lake: the same
// routed outflow and levels as the polygon's area × depth.
TEST(LakeInput, ConstantAreaTableIsThePrismaticLake) {
  testsupport::TempDir dir;
  // 1000 m square: 1e6 m2, the same area in the table.
  writeText(dir.path() / "rating.csv", "level_m,outflow_m3s\n100,0\n101,40\n103,200\n");
  writeText(dir.path() / "rating_area.csv",
            "level_m,outflow_m3s,area_m2\n100,0,1e6\n101,40,1e6\n103,200,1e6\n");
  writeText(dir.path() / "area.csv", "level_m,area_m2\n100,1e6\n100.5,1e6\n110,1e6\n");
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLayer(path, {{square({0, 0}, 500), {{"bottom_level_m", 100}}, {{"lake_id", "P"}, {"outflow_table", "rating.csv"}}},
                    {square({5000, 0}, 500), {}, {{"lake_id", "T3"}, {"outflow_table", "rating_area.csv"}}},
                    {square({9000, 0}, 500), {}, {{"lake_id", "S"}, {"outflow_table", "rating.csv"},
                                                  {"storage_table", "area.csv"}}}});
  const auto table = io::readLakes(path, {});
  ASSERT_EQ(table.lakes.size(), 3u);
  EXPECT_TRUE(table.lakes[0].storage_level_m.empty());
  EXPECT_FALSE(table.lakes[1].storage_level_m.empty());
  EXPECT_FALSE(table.lakes[2].storage_level_m.empty());
  std::vector<double> inflow(48, 5.0);
  for (std::size_t k = 4; k < 20; ++k) inflow[k] = 5.0 + 150.0 * std::sin(M_PI * (k - 4) / 16.0);
  const auto prismatic = table.lakes[0].levelPool().route(inflow, 3600);
  for (std::size_t l = 1; l < 3; ++l) {
    const auto tabled = table.lakes[l].levelPool().route(inflow, 3600);
    ASSERT_EQ(tabled.outflow_m3s.size(), prismatic.outflow_m3s.size());
    for (std::size_t k = 0; k < inflow.size(); ++k) {
      // Same relation, so equal to rounding (1e-9 relative: the table's
      // storage is summed row by row).
      EXPECT_NEAR(tabled.outflow_m3s[k], prismatic.outflow_m3s[k], 1e-9 * (1 + prismatic.outflow_m3s[k]))
          << table.lakes[l].lake_id << " step " << k;
      EXPECT_NEAR(tabled.level_m[k], prismatic.level_m[k], 1e-9) << table.lakes[l].lake_id << " step " << k;
    }
  }
}

// Area growing linearly with level: a frustum, S(d) = A0 d + ½ a d².
TEST(LakeInput, LinearAreaGivesTheFrustumStorage) {
  testsupport::TempDir dir;
  const double h0 = 200, a0 = 2e5, a = 5e4;  // m, m2, m2 per m
  std::string csv = "level_m,area_m2\n";
  for (int i = 0; i <= 6; ++i) csv += std::to_string(h0 + i) + "," + std::to_string(a0 + a * i) + "\n";
  writeText(dir.path() / "frustum.csv", csv);
  // The same frustum as a third column of the outflow table, as storage.
  std::string rating = "level_m,outflow_m3s,storage_m3\n";
  for (int i = 0; i <= 6; ++i)
    rating += fmt::format("{},{},{}\n", h0 + i, i == 0 ? 0.0 : 10.0 * i * i, a0 * i + 0.5 * a * i * i);
  writeText(dir.path() / "rating.csv", rating);
  const std::string path = (dir.path() / "lakes.gpkg").string();
  writeLayer(path, {{square({0, 0}, 100), {{"k_h", 10}}, {{"lake_id", "F"}, {"storage_table", "frustum.csv"}}},
                    {square({1000, 0}, 100), {}, {{"lake_id", "G"}, {"outflow_table", "rating.csv"}}}});
  const auto table = io::readLakes(path, {});
  const auto& f = table.lakes[0];
  EXPECT_EQ(f.bottom_level_m, h0) << "the table's first level is the empty level";
  const auto pool = f.levelPool();
  const auto& storage = pool.levelStorage();
  for (int i = 0; i <= 6; ++i) {
    const double d = i, exact = a0 * d + 0.5 * a * d * d;
    // At the rows the trapezoidal rule is exact for linear area (to rounding).
    EXPECT_NEAR(storage.storage(h0 + d), exact, 1e-9 * exact) << "row " << i;
    EXPECT_NEAR(storage.level(exact), h0 + d, 1e-9) << "row " << i;
    if (i == 6) break;
    // Between rows storage is linear: below the parabola by a Δh²/8 at the
    // middle (the error of linear interpolation of a quadratic).
    const double mid = d + 0.5, exact_mid = a0 * mid + 0.5 * a * mid * mid;
    EXPECT_NEAR(storage.storage(h0 + mid) - exact_mid, a / 8, 1e-6 * exact_mid) << "row " << i;
  }
  // Surface area just above a row: the mean of the row's area and the next.
  EXPECT_NEAR(storage.area(h0 + 2), a0 + a * 2.5, 1e-6);
  // The outflow table's storage column gives the same relation.
  const auto& g = table.lakes[1];
  for (int i = 0; i <= 6; ++i)
    EXPECT_NEAR(g.levelPool().levelStorage().storage(h0 + i), a0 * i + 0.5 * a * i * i, 1e-6) << "row " << i;
}

TEST(LakeInput, BadTablesNameLakeFileAndLine) {
  testsupport::TempDir dir;
  const auto run = [&](const std::string& table_file, const std::string& text, const std::string& field,
                       std::map<std::string, double> numbers = {{"k_h", 3}},
                       std::map<std::string, std::string> more = {}) {
    writeText(dir.path() / table_file, text);
    std::map<std::string, std::string> texts{{"lake_id", "Q"}, {field, table_file}};
    texts.insert(more.begin(), more.end());
    const std::string path = (dir.path() / "lakes.gpkg").string();
    std::filesystem::remove(path);
    writeLayer(path, {{square({0, 0}, 100), numbers, texts}});
    return errorOf([&] { io::readLakes(path, {}); });
  };
  // Levels not increasing (line 3 is the second row).
  std::string e = run("down.csv", "level_m,area_m2\n10,100\n9,200\n", "storage_table");
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "down.csv") && contains(e, "line 3") &&
              contains(e, "levels must increase"))
      << e;
  e = run("neg.csv", "level_m,area_m2\n10,100\n11,-5\n", "storage_table");
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "neg.csv") && contains(e, "line 3") && contains(e, "negative")) << e;
  e = run("first.csv", "level_m,storage_m3\n10,50\n11,500\n", "storage_table");
  EXPECT_TRUE(contains(e, "first.csv") && contains(e, "line 2") && contains(e, "first storage must be 0")) << e;
  e = run("flat.csv", "level_m,storage_m3\n10,0\n11,500\n12,500\n", "storage_table");
  EXPECT_TRUE(contains(e, "flat.csv") && contains(e, "line 4") && contains(e, "storage must increase")) << e;
  e = run("dry.csv", "level_m,area_m2\n10,0\n11,0\n12,500\n", "storage_table");
  EXPECT_TRUE(contains(e, "dry.csv") && contains(e, "line 3") && contains(e, "area is 0")) << e;
  e = run("head.csv", "level_m,volume\n10,0\n11,5\n", "storage_table");
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "head.csv") && contains(e, "line 1") && contains(e, "header")) << e;
  e = run("one.csv", "level_m,area_m2\n10,5\n", "storage_table");
  EXPECT_TRUE(contains(e, "one.csv") && contains(e, "at least two rows")) << e;
  e = run("text.csv", "level_m,area_m2\n10,5\n11,lots\n", "storage_table");
  EXPECT_TRUE(contains(e, "text.csv") && contains(e, "line 3") && contains(e, "field area_m2")) << e;
  // A third column only after level_m.
  e = run("bystorage.csv", "storage_m3,outflow_m3s,area_m2\n0,0,5\n10,1,5\n", "outflow_table", {});
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "bystorage.csv") && contains(e, "header")) << e;
  // The outflow table's third column and a storage table: two relations.
  writeText(dir.path() / "area.csv", "level_m,area_m2\n10,100\n11,200\n");
  e = run("rating3.csv", "level_m,outflow_m3s,area_m2\n10,0,100\n11,5,200\n", "outflow_table", {},
          {{"storage_table", "area.csv"}});
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "field storage_table") && contains(e, "two level")) << e;
  // A bottom level that is not the table's empty level.
  e = run("ok.csv", "level_m,area_m2\n10,100\n11,200\n", "storage_table", {{"k_h", 3}, {"bottom_level_m", 9}});
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "field bottom_level_m") && contains(e, "first level")) << e;
  // A weir crest below the table's empty level.
  e = run("ok2.csv", "level_m,area_m2\n10,100\n11,200\n", "storage_table",
          {{"crest_level_m", 9}, {"weir_length_m", 3}});
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "field crest_level_m")) << e;
  // A missing table file.
  e = run("x.csv", "", "storage_table");
  std::filesystem::remove(dir.path() / "x.csv");
  {
    const std::string path = (dir.path() / "lakes.gpkg").string();
    e = errorOf([&] { io::readLakes(path, {}); });
  }
  EXPECT_TRUE(contains(e, "lake Q") && contains(e, "x.csv") && contains(e, "cannot open")) << e;
}
