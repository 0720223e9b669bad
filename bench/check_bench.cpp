// Reading and validating a large network: generates a 1,000,000-reach
// GeoPackage once, then times each stage of `reachwise check` beside a plain
// GDAL read of the same file (the floor). Not a Google Benchmark fixture: each
// stage runs once on a file too big to repeat, and bench/check_1m.sh runs the
// modes as separate processes so /usr/bin/time -v sees each one's peak RSS.
//
//   check_bench generate FILE [N]   write the network (skipped when FILE exists)
//   check_bench gdal FILE           read every feature, field and vertex with OGR
//   check_bench read FILE           io::readNetwork only
//   check_bench check FILE          read + ReachGraph + validate + summary + freeze
#include <fmt/core.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/NetworkSummary.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/Validation.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double secondsSince(Clock::time_point t0) {
  return std::chrono::duration<double>(Clock::now() - t0).count();
}

/// Heap-shaped binary tree: reach k drains into reach (k - 1) / 2, reach 0 is
/// the outlet. Node k sits at depth d = floor(log2(k + 1)), spread evenly
/// across a 1000 km wide band; reach k is the straight line from its node to
/// its parent's node, so the geometry agrees with to_reach.
struct Layout {
  static int depth(std::size_t k) { return static_cast<int>(std::floor(std::log2(double(k) + 1))); }
  static OGRPoint node(std::size_t k) {
    const int d = depth(k);
    const double level = std::ldexp(1.0, d);
    const double i = double(k) + 1 - level;  // position within the level
    return OGRPoint(500000.0 - 5e5 + (i + 0.5) * 1e6 / level, 5000000.0 + 100.0 * (d + 1));
  }
};

int generate(const std::string& path, std::size_t n) {
  if (std::filesystem::exists(path)) {
    fmt::print("generate: {} exists, kept\n", path);
    return 0;
  }
  reachwise::io::ensureGdal();
  const auto t0 = Clock::now();
  const std::string tmp = path + ".partial.gpkg";
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  std::unique_ptr<GDALDataset> ds(driver->Create(tmp.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!ds) return fmt::print(stderr, "cannot create {}\n", tmp), 1;
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbLineString, nullptr);
  for (const char* name : {"reach_id", "to_reach"}) {
    OGRFieldDefn f(name, OFTString);
    layer->CreateField(&f);
  }
  for (const char* name : {"slope", "manning_n", "bottom_width", "side_slope"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  ds->StartTransaction();
  for (std::size_t k = 0; k < n; ++k) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", fmt::format("R{}", k).c_str());
    if (k > 0) f.SetField("to_reach", fmt::format("R{}", (k - 1) / 2).c_str());
    f.SetField("slope", 0.001 + 0.0001 * double(Layout::depth(k)));
    f.SetField("manning_n", 0.035);
    f.SetField("bottom_width", 40.0 / (1 + Layout::depth(k)));
    f.SetField("side_slope", 2.0);
    const OGRPoint top = Layout::node(k);
    const OGRPoint bottom = k > 0 ? Layout::node((k - 1) / 2) : OGRPoint(top.getX(), top.getY() - 100.0);
    OGRLineString line;
    line.addPoint(&top);
    line.addPoint(&bottom);
    f.SetGeometry(&line);
    if (layer->CreateFeature(&f) != OGRERR_NONE) return fmt::print(stderr, "write failed\n"), 1;
  }
  ds->CommitTransaction();
  ds.reset();
  std::filesystem::rename(tmp, path);
  fmt::print("generate: {} reaches in {:.1f} s\n", n, secondsSince(t0));
  return 0;
}

/// Every feature, every field and every vertex through OGR: the floor for any reader.
int gdalFloor(const std::string& path) {
  reachwise::io::ensureGdal();
  const auto t0 = Clock::now();
  GDALDatasetUniquePtr ds(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) return fmt::print(stderr, "cannot open {}\n", path), 1;
  std::size_t features = 0, chars = 0, vertices = 0;
  double sum = 0;
  for (const auto& f : *ds->GetLayer(0)) {
    ++features;
    chars += std::string(f->GetFieldAsString("reach_id")).size();
    chars += std::string(f->GetFieldAsString("to_reach")).size();
    sum += f->GetFieldAsDouble("slope") + f->GetFieldAsDouble("manning_n") +
           f->GetFieldAsDouble("bottom_width") + f->GetFieldAsDouble("side_slope");
    if (const auto* line = dynamic_cast<const OGRLineString*>(f->GetGeometryRef())) {
      vertices += static_cast<std::size_t>(line->getNumPoints());
      sum += line->get_Length();
    }
  }
  fmt::print("gdal: {} features, {} vertices, {} id chars (checksum {:.6g}) in {:.2f} s\n", features,
             vertices, chars, sum, secondsSince(t0));
  return 0;
}

int readAndCheck(const std::string& path, bool with_graph) {
  namespace net = reachwise::network;
  auto t0 = Clock::now();
  net::ProblemList problems;
  const auto table = reachwise::io::readNetwork(path, reachwise::io::ReadOptions{}, problems);
  const double read_s = secondsSince(t0);
  fmt::print("read: {} reaches, {} problems in {:.2f} s\n", table.reaches.size(), problems.size(), read_s);
  if (!with_graph) return 0;

  t0 = Clock::now();
  const net::ReachGraph graph(table);
  const double build_s = secondsSince(t0);
  t0 = Clock::now();
  net::mergeProblems(problems, net::validate(graph));
  const double validate_s = secondsSince(t0);
  t0 = Clock::now();
  const auto s = net::summarize(graph);
  const double summary_s = secondsSince(t0);
  t0 = Clock::now();
  const auto plan = graph.freeze();
  const double freeze_s = secondsSince(t0);
  fmt::print("graph: build {:.2f} s, validate {:.2f} s, summary {:.2f} s, freeze {:.2f} s\n", build_s,
             validate_s, summary_s, freeze_s);
  fmt::print("network: {} reaches, {} headwaters, {} confluences, {} outlets, {:.1f} km, "
             "strahler max {}, {} problems, plan of {}\n",
             s.reaches, s.headwaters, s.confluences, s.outlets, s.total_length_km, s.max_strahler,
             problems.size(), plan.size());
  fmt::print("total: {:.2f} s\n", read_s + build_s + validate_s + summary_s + freeze_s);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 3) {
    fmt::print(stderr, "usage: check_bench generate|gdal|read|check FILE [N]\n");
    return 2;
  }
  const std::string mode = argv[1], path = argv[2];
  try {
    if (mode == "generate") return generate(path, argc > 3 ? std::stoul(argv[3]) : 1000000);
    if (mode == "gdal") return gdalFloor(path);
    if (mode == "read") return readAndCheck(path, false);
    if (mode == "check") return readAndCheck(path, true);
  } catch (const reachwise::Error& e) {
    fmt::print(stderr, "error: {}\n", e.what());
    return 1;
  }
  fmt::print(stderr, "unknown mode {}\n", mode);
  return 2;
}
