// The first step of every run in-process: reading the sample networks and
// small invented layers, building and validating the graph (run::loadNetwork),
// the one-line problem form and the problems GeoPackage. The expectations
// are read from the layers with GDAL directly.
#include "reachwise/run/Network.hpp"

#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <regex>
#include <set>
#include <string>

#include "reachwise/network/NetworkSummary.hpp"
#include "support/Scratch.hpp"

namespace {

using namespace reachwise;

const std::string kSamples = REACHWISE_SOURCE_DIR "/sample-network/";

/// What `reachwise check` would print for a network: its summary and its
/// problems, one line each.
struct Checked {
  std::unique_ptr<run::LoadedNetwork> net;
  network::NetworkSummary summary;
  std::string err;   ///< the problem lines
  bool errors() const { return net->hasErrors(); }
};

Checked check(const std::string& path) {
  Checked c;
  c.net = run::loadNetwork({path, "", "", ""});
  c.summary = network::summarize(*c.net->graph);
  for (const auto& p : c.net->problems) c.err += run::problemLine(p) + "\n";
  return c;
}

GDALDatasetUniquePtr open(const std::string& path) {
  GDALAllRegister();
  return GDALDatasetUniquePtr(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
}

/// Facts about a sample layer read straight from GDAL.
struct LayerFacts {
  std::size_t features = 0, headwaters = 0, outlets = 0;
  double planar_length_km = 0;
};

LayerFacts factsOf(const std::string& path) {
  const auto ds = open(path);
  EXPECT_TRUE(ds);
  LayerFacts facts;
  if (!ds) return facts;
  OGRLayer* layer = ds->GetLayer(0);
  std::set<std::string> ids, downstream;
  for (const auto& f : *layer) {
    ++facts.features;
    ids.insert(f->GetFieldAsString("reach_id"));
    if (f->IsFieldSetAndNotNull(f->GetFieldIndex("to_reach")))
      downstream.insert(f->GetFieldAsString("to_reach"));
    else
      ++facts.outlets;
    if (const auto* line = dynamic_cast<const OGRLineString*>(f->GetGeometryRef()))
      facts.planar_length_km += line->get_Length() / 1000.0;
  }
  for (const auto& id : ids) facts.headwaters += downstream.count(id) == 0;
  return facts;
}

/// `severity code reach_id fid (x, y): sentence`
struct ProblemLine {
  std::string severity, code, reach_id;
  long long fid = -1;
  double x = NAN, y = NAN;
};

std::vector<ProblemLine> problemLines(const std::string& err) {
  const std::regex line(R"((info|warning|error) (\w+) (\S+) (\d+) \(([-\d.e+]+), ([-\d.e+]+)\): .+)");
  std::vector<ProblemLine> out;
  for (auto it = std::sregex_iterator(err.begin(), err.end(), line); it != std::sregex_iterator(); ++it) {
    const auto& m = *it;
    out.push_back({m[1], m[2], m[3], std::stoll(m[4]), std::stod(m[5]), std::stod(m[6])});
  }
  return out;
}

/// True when (x, y) is an end point of the feature `fid` of the sample, per GDAL.
bool isEndOf(const std::string& path, long long fid, double x, double y) {
  const auto ds = open(path);
  if (!ds) return false;
  std::unique_ptr<OGRFeature> f(ds->GetLayer(0)->GetFeature(fid));
  if (!f) return false;
  const auto* line = dynamic_cast<const OGRLineString*>(f->GetGeometryRef());
  if (!line || line->getNumPoints() < 2) return false;
  OGRPoint a, b;
  line->StartPoint(&a);
  line->EndPoint(&b);
  const auto near = [&](const OGRPoint& p) { return std::hypot(p.getX() - x, p.getY() - y) < 0.01; };
  return near(a) || near(b);
}

struct Row {
  const char* id;
  const char* to;  // nullptr = outlet
  double split;    // NaN = not given
  double x0, y0, x1, y1;
};

/// A small invented layer (EPSG:32633) written with GDAL.
std::string writeLayer(const std::string& name, const std::vector<Row>& rows) {
  const auto path = (testsupport::testScratchDir() / name).string();
  std::filesystem::remove(path);
  GDALAllRegister();
  std::unique_ptr<GDALDataset> ds(
      GetGDALDriverManager()->GetDriverByName("GPKG")->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbLineString, nullptr);
  for (const char* f : {"reach_id", "to_reach"}) {
    OGRFieldDefn d(f, OFTString);
    layer->CreateField(&d);
  }
  for (const char* f : {"slope", "manning_n", "bottom_width", "split"}) {
    OGRFieldDefn d(f, OFTReal);
    layer->CreateField(&d);
  }
  for (const auto& r : rows) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", r.id);
    if (r.to) f.SetField("to_reach", r.to);
    if (!std::isnan(r.split)) f.SetField("split", r.split);
    f.SetField("slope", 0.002);
    f.SetField("manning_n", 0.04);
    f.SetField("bottom_width", 12.0);
    OGRLineString line;
    line.addPoint(r.x0, r.y0);
    line.addPoint(r.x1, r.y1);
    f.SetGeometry(&line);
    EXPECT_EQ(layer->CreateFeature(&f), OGRERR_NONE);
  }
  return path;
}

std::vector<Row> bifurcation(double split_a, double split_b) {
  // Upper reach U splits at (1000, 1000) into A and B, which meet again in L.
  return {{"U", "A;B", NAN, 1000, 0, 1000, 1000},
          {"A", "L", split_a, 1000, 1000, 500, 2000},
          {"B", "L", split_b, 1000, 1000, 1500, 2000},
          {"L", nullptr, NAN, 1000, 3000, 1000, 4000}};
}

}  // namespace

TEST(LoadNetwork, BifurcationWithSplitsSummingToOnePasses) {
  const auto c = check(writeLayer("bifurcation_ok.gpkg", bifurcation(0.4, 0.6)));
  EXPECT_FALSE(c.errors()) << c.err;
  EXPECT_EQ(c.summary.bifurcations, 1u);
  EXPECT_EQ(c.summary.confluences, 0u);  // A and B meeting in L is a side-arm return
  EXPECT_EQ(c.summary.side_arm_returns, 1u);
}

TEST(LoadNetwork, BifurcationSplitSumIsRefusedAtTheSplit) {
  const auto c = check(writeLayer("bifurcation_bad.gpkg", bifurcation(0.4, 0.7)));
  EXPECT_TRUE(c.errors());
  const auto lines = problemLines(c.err);
  const auto it = std::find_if(lines.begin(), lines.end(),
                               [](const auto& p) { return p.code == "bifurcation_split_sum"; });
  ASSERT_NE(it, lines.end()) << c.err;
  EXPECT_EQ(it->reach_id, "U");
  EXPECT_DOUBLE_EQ(it->x, 1000.0);  // the downstream end of U
  EXPECT_DOUBLE_EQ(it->y, 1000.0);
}

TEST(LoadNetwork, UnknownToReachIsRefused) {
  const auto path = writeLayer("unknown_to.gpkg", {{"U", "NOWHERE", NAN, 0, 0, 0, 1000},
                                                   {"L", nullptr, NAN, 0, 1000, 0, 2000}});
  const auto c = check(path);
  EXPECT_TRUE(c.errors());
  const auto lines = problemLines(c.err);
  ASSERT_FALSE(lines.empty()) << c.err;
  EXPECT_EQ(lines[0].code, "unknown_to_reach");
  EXPECT_EQ(lines[0].reach_id, "U");
  EXPECT_TRUE(isEndOf(path, lines[0].fid, lines[0].x, lines[0].y));
  EXPECT_NE(c.err.find("NOWHERE"), std::string::npos);
}

TEST(LoadNetwork, CleanSampleMatchesWhatGdalReads) {
  const auto c = check(kSamples + "network.gpkg");
  EXPECT_FALSE(c.errors()) << c.err;
  const auto facts = factsOf(kSamples + "network.gpkg");
  ASSERT_GT(facts.features, 0u);
  EXPECT_EQ(c.summary.reaches, facts.features);
  EXPECT_EQ(c.summary.headwaters, facts.headwaters);
  EXPECT_EQ(c.summary.outlets, facts.outlets);
  // No length field in the sample: lengths are planar (a UTM layer), as GDAL measures them.
  EXPECT_NEAR(c.summary.total_length_km, facts.planar_length_km, 1e-9 * facts.planar_length_km);
  EXPECT_EQ(c.summary.basins, 1u);
  EXPECT_GT(c.summary.max_strahler, 1u);
}

TEST(LoadNetwork, CycleIsRefusedNamingReachFeatureAndPlace) {
  const auto path = kSamples + "cycle.gpkg";
  const auto c = check(path);
  EXPECT_TRUE(c.errors());
  const auto lines = problemLines(c.err);
  const auto it = std::find_if(lines.begin(), lines.end(), [](const auto& p) { return p.code == "cycle"; });
  ASSERT_NE(it, lines.end()) << c.err;
  EXPECT_EQ(it->severity, "error");
  EXPECT_TRUE(isEndOf(path, it->fid, it->x, it->y)) << "fid " << it->fid;
  // The sample's outlet drains back into the third stem reach: R1 -> R3 -> R2 -> R1.
  EXPECT_NE(c.err.find("R1, R2, R3"), std::string::npos) << c.err;
  EXPECT_EQ(c.summary.outlets, 0u);
  EXPECT_THROW(run::routablePlan(*c.net), run::NetworkHasErrors);
}

TEST(LoadNetwork, GapIsReportedAtTheLooseEnd) {
  const auto path = kSamples + "gap.gpkg";
  const auto c = check(path);
  const auto lines = problemLines(c.err);
  const auto it =
      std::find_if(lines.begin(), lines.end(), [](const auto& p) { return p.code == "probable_gap"; });
  ASSERT_NE(it, lines.end()) << c.err;
  EXPECT_TRUE(c.errors());
  EXPECT_EQ(it->severity, "error");
  EXPECT_TRUE(isEndOf(path, it->fid, it->x, it->y)) << "fid " << it->fid;
  // A gap leaves the tributary as a basin of its own, listed with its outlet.
  EXPECT_EQ(c.summary.basins, 2u);
  EXPECT_EQ(std::count_if(lines.begin(), lines.end(), [](const auto& p) { return p.code == "basin"; }), 2);
}

TEST(LoadNetwork, MissingFileAndMissingFieldAreNamed) {
  try {
    run::loadNetwork({"/nonexistent/rivers_of_nowhere.gpkg", "", "", ""});
    ADD_FAILURE() << "a missing file was read";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "/nonexistent/rivers_of_nowhere.gpkg");
  }
  try {
    run::loadNetwork({kSamples + "missing_field.gpkg", "", "", ""});
    ADD_FAILURE() << "a layer without slope was read";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("missing_field.gpkg"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("slope"), std::string::npos) << e.what();
  }
  EXPECT_THROW(run::loadNetwork({kSamples + "network.gpkg", "no_such_layer", "", ""}), InputError);
}

TEST(LoadNetwork, ProblemsGeoPackageHoldsProblemsAndNetwork) {
  const auto out = testsupport::testScratchDir() / "check_problems.gpkg";
  std::filesystem::remove(out);
  const auto c = check(kSamples + "cycle.gpkg");
  run::writeProblems(out.string(), *c.net);
  const auto ds = open(out.string());
  ASSERT_TRUE(ds);

  OGRLayer* problems = ds->GetLayerByName("problems");
  ASSERT_NE(problems, nullptr);
  EXPECT_EQ(wkbFlatten(problems->GetGeomType()), wkbPoint);
  for (const char* field : {"code", "severity", "reach_id", "fid", "message"})
    EXPECT_GE(problems->GetLayerDefn()->GetFieldIndex(field), 0) << field;
  EXPECT_EQ(static_cast<std::size_t>(problems->GetFeatureCount()), problemLines(c.err).size());

  OGRLayer* network = ds->GetLayerByName("network");
  ASSERT_NE(network, nullptr);
  EXPECT_EQ(wkbFlatten(network->GetGeomType()), wkbLineString);
  for (const char* field : {"reach_id", "to_reach", "flipped", "split", "strahler", "basin"})
    EXPECT_GE(network->GetLayerDefn()->GetFieldIndex(field), 0) << field;
  EXPECT_EQ(static_cast<std::size_t>(network->GetFeatureCount()), factsOf(kSamples + "cycle.gpkg").features);
  // Same CRS as the input.
  const auto input = open(kSamples + "cycle.gpkg");
  ASSERT_TRUE(input);
  ASSERT_NE(network->GetSpatialRef(), nullptr);
  EXPECT_TRUE(network->GetSpatialRef()->IsSame(input->GetLayer(0)->GetSpatialRef()));
  // Nothing left under a temporary name.
  for (const auto& entry : std::filesystem::directory_iterator(out.parent_path()))
    EXPECT_EQ(entry.path().filename().string().find(".partial-"), std::string::npos) << entry.path();
}

TEST(LoadNetwork, StrahlerInProblemsFileMatchesAHandCount) {
  // The clean sample: read back strahler and check the Strahler (1957) rule on
  // every reach against its upstream reaches, using to_reach as GDAL reads it.
  const auto out = testsupport::testScratchDir() / "check_clean.gpkg";
  const auto c = check(kSamples + "network.gpkg");
  ASSERT_FALSE(c.errors()) << c.err;
  run::writeProblems(out.string(), *c.net);
  const auto ds = open(out.string());
  ASSERT_TRUE(ds);
  std::map<std::string, int> order;
  std::map<std::string, std::vector<std::string>> feeders;
  for (const auto& f : *ds->GetLayerByName("network")) {
    order[f->GetFieldAsString("reach_id")] = f->GetFieldAsInteger("strahler");
    if (f->IsFieldSetAndNotNull(f->GetFieldIndex("to_reach")))
      feeders[f->GetFieldAsString("to_reach")].push_back(f->GetFieldAsString("reach_id"));
  }
  for (const auto& [id, s] : order) {
    int top = 0, at_top = 0;
    for (const auto& u : feeders[id]) {
      if (order[u] > top) top = order[u], at_top = 1;
      else if (order[u] == top) ++at_top;
    }
    const int expected = top == 0 ? 1 : (at_top >= 2 ? top + 1 : top);
    EXPECT_EQ(s, expected) << id;
  }
  const network::NetworkPlan plan = run::routablePlan(*c.net);
  EXPECT_EQ(*std::max_element(plan.strahler.begin(), plan.strahler.end()), c.summary.max_strahler);
}

namespace {

/// `check` with a run file holding `toml` (written beside the layer).
Checked checkWith(const std::string& path, const std::string& name, const std::string& toml) {
  const auto config = (testsupport::testScratchDir() / name).string();
  std::ofstream(config) << toml;
  Checked c;
  c.net = run::loadNetwork({path, "", config, ""});
  c.summary = network::summarize(*c.net->graph);
  for (const auto& p : c.net->problems) c.err += run::problemLine(p) + "\n";
  return c;
}

std::size_t countCode(const std::vector<ProblemLine>& lines, const std::string& code) {
  return static_cast<std::size_t>(
      std::count_if(lines.begin(), lines.end(), [&](const auto& p) { return p.code == code; }));
}

/// reach_id -> `split` of the `network` layer of a problems GeoPackage (NaN when null).
std::map<std::string, double> writtenSplits(const Checked& c, const std::string& name) {
  const auto out = testsupport::testScratchDir() / name;
  run::writeProblems(out.string(), *c.net);
  const auto ds = open(out.string());
  std::map<std::string, double> split;
  EXPECT_TRUE(ds);
  if (!ds) return split;
  for (const auto& f : *ds->GetLayerByName("network")) {
    const int k = f->GetFieldIndex("split");
    split[f->GetFieldAsString("reach_id")] = f->IsFieldSetAndNotNull(k) ? f->GetFieldAsDouble(k) : NAN;
  }
  return split;
}

}  // namespace

TEST(LoadNetwork, BifurcationWithoutSplitsIsSharedByWidthAndTheLayerShowsTheShares) {
  // Both branches are 12 m wide (writeLayer): shares 12/24 each.
  const auto c = check(writeLayer("bifurcation_bare.gpkg", bifurcation(NAN, NAN)));
  EXPECT_FALSE(c.errors()) << c.err;
  const auto lines = problemLines(c.err);
  ASSERT_EQ(countCode(lines, "split_assumed"), 1u) << c.err;
  EXPECT_NE(c.err.find("A 0.5, B 0.5"), std::string::npos) << c.err;
  const auto split = writtenSplits(c, "bifurcation_bare_problems.gpkg");
  EXPECT_DOUBLE_EQ(split.at("A"), 0.5);
  EXPECT_DOUBLE_EQ(split.at("B"), 0.5);
  EXPECT_TRUE(std::isnan(split.at("U")));
}

TEST(LoadNetwork, RunFileOverrideSetsTheSharesAndItsMistakesNameTheFileAndKey) {
  const auto path = writeLayer("bifurcation_override.gpkg", bifurcation(0.4, 0.6));
  const auto c = checkWith(path, "override.toml", "[[network.split]]\nat = \"U\"\nshares = { A = 0.9, B = 0.1 }\n");
  EXPECT_TRUE(c.net->problems.empty()) << c.err;
  // The layer written by check shows the shares in use, not the fields.
  const auto split = writtenSplits(c, "bifurcation_override_problems.gpkg");
  EXPECT_DOUBLE_EQ(split.at("A"), 0.9);
  EXPECT_DOUBLE_EQ(split.at("B"), 0.1);
  // And the plan routes with them.
  const auto plan = run::routablePlan(*c.net);
  for (std::size_t i = 0; i < plan.size(); ++i)
    if (plan.reach_id[i] == "A") {
      EXPECT_DOUBLE_EQ(plan.up_fraction[plan.up_offset[i]], 0.9);
    }

  const auto config = (testsupport::testScratchDir() / "override_bad.toml").string();
  std::ofstream(config) << "[[network.split]]\nat = \"U\"\nshares = { A = 0.9, L = 0.1 }\n";
  try {
    run::loadNetwork({path, "", config, ""});
    ADD_FAILURE() << "an override naming a reach that is no branch was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, config);
    EXPECT_EQ(e.where().field, "network.split[1].shares.L");
  }
}

TEST(LoadNetwork, SplitOnACutBranchLineIsUsedOnceAndNotReportedUnused) {
  // Topology from geometry. U flows north and splits at (0, 1000) into A
  // (north-west, split 0.6) and B (north-east, split 0.4). The tributary T
  // ends on A's interior at (-250, 1500), so A is cut in two pieces that
  // both copy A's split; only the upper piece leaves the bifurcation.
  const auto path = writeLayer("cut_branch.gpkg", {{"U", nullptr, NAN, 0, 0, 0, 1000},
                                                   {"A", nullptr, 0.6, 0, 1000, -500, 2000},
                                                   {"B", nullptr, 0.4, 0, 1000, 500, 2000},
                                                   {"T", nullptr, NAN, -1000, 1500, -250, 1500}});
  const auto c = checkWith(path, "geometry.toml", "[network]\ntopology = \"geometry\"\n");
  const auto lines = problemLines(c.err);
  ASSERT_EQ(countCode(lines, "split_line"), 1u) << c.err;  // A was cut
  EXPECT_EQ(countCode(lines, "split_unused"), 0u) << c.err;
  EXPECT_FALSE(c.errors()) << c.err;
  const auto& g = *c.net->graph;
  const auto u = g.find("U");
  ASSERT_TRUE(u.has_value());
  const auto* shares = g.sharesAt(*u);
  ASSERT_NE(shares, nullptr) << c.err;
  ASSERT_EQ(shares->branches.size(), 2u);
  for (std::size_t k = 0; k < 2; ++k) {
    const std::string& id = g.id(shares->branches[k]);
    EXPECT_DOUBLE_EQ(shares->share[k], id == "B" ? 0.4 : 0.6) << id;
    if (id != "B") {
      EXPECT_EQ(id.rfind("A.", 0), 0u) << id;  // a piece of A
    }
  }
}
