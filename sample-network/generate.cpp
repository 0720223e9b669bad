// Writes the sample network of the invented Brannoch catchment and its
// broken variants (see README.md). Deterministic: the same files every run.
//   reachwise_make_sample [OUT_DIR]     (default: the folder of this file)
#include <cpl_conv.h>
#include <gdal_priv.h>
#include <ogr_geometry.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

namespace {

struct Pt {
  double x, y;
};

struct Reach {
  std::string id, to, shape = "trapezoid";
  std::vector<Pt> line;  // upstream to downstream
  double slope = 0, n = 0, width = 0, side = 0, diameter = NAN;
  double bank_depth = NAN, fp_width = NAN, fp_n = NAN, k_h = 0, x = 0.2;
};

/// Small deterministic generator (64-bit LCG, Knuth's MMIX constants), so
/// the files do not depend on the standard library's distributions.
class Lcg {
public:
  explicit Lcg(std::uint64_t seed) : s_(seed) {}
  double uniform(double lo, double hi) {
    s_ = s_ * 6364136223846793005ULL + 1442695040888963407ULL;
    return lo + (hi - lo) * static_cast<double>(s_ >> 11) / 9007199254740992.0;
  }

private:
  std::uint64_t s_;
};

class Builder {
public:
  std::vector<Reach> reaches;
  Lcg rng{20260501};

  /// Adds a reach from `top` down to `bottom` with two meander vertices.
  Reach& add(Pt top, Pt bottom, const std::string& to) {
    Reach r;
    r.id = "R";
    r.id += std::to_string(reaches.size() + 1);
    r.to = to;
    const double dx = bottom.x - top.x, dy = bottom.y - top.y;
    const double len = std::hypot(dx, dy);
    r.line.push_back(top);
    for (double t : {0.35, 0.7}) {
      const double off = rng.uniform(-0.08, 0.08) * len;  // sideways, perpendicular
      r.line.push_back({top.x + t * dx - off * dy / len, top.y + t * dy + off * dx / len});
    }
    r.line.push_back(bottom);
    reaches.push_back(r);
    return reaches.back();
  }
};

double lineLength(const std::vector<Pt>& l) {
  double s = 0;
  for (std::size_t i = 1; i < l.size(); ++i) s += std::hypot(l[i].x - l[i - 1].x, l[i].y - l[i - 1].y);
  return s;
}

/// A tributary chain of `count` reaches from `mouth` outward, each feeding
/// the one before; returns the id of its top reach.
std::string tributary(Builder& b, Pt mouth, const std::string& into, double dir_x, int count,
                      double slope0, double width0, bool culverts = false) {
  std::string to = into;
  Pt bottom = mouth;
  for (int k = 0; k < count; ++k) {
    const bool culvert = culverts && k >= 1 && k <= 3;  // pipes under a road embankment
    const Pt top = culvert ? Pt{bottom.x + dir_x * b.rng.uniform(40, 80), bottom.y + 10}
                           : Pt{bottom.x + dir_x * b.rng.uniform(1100, 1500),
                                bottom.y + b.rng.uniform(400, 700)};
    Reach& r = b.add(top, bottom, to);
    const std::string id = r.id;
    r.slope = slope0 * (1 + 0.6 * k);
    r.width = std::max(2.0, width0 * (1 - 0.18 * k));
    r.n = 0.035 + 0.005 * k;
    r.side = 1.5;
    if (culvert) {
      r.shape = "circle";
      r.diameter = 1.2 + 0.2 * (3 - k);
      r.n = 0.025;  // corrugated metal pipe (common practice)
      r.width = NAN;
      r.side = NAN;
    }
    // A side branch joins at the bottom of the second reach of each chain.
    if (k == 1) {
      const double s = r.slope * 1.5, w = std::max(2.0, r.width * 0.5);
      for (int j = 0; j < 2; ++j) {
        const Pt t2{top.x + dir_x * 300 * (j + 1), top.y + 1100.0 * (j + 1)};
        const Pt b2 = j == 0 ? top : b.reaches.back().line.front();
        Reach& side = b.add(t2, b2, j == 0 ? id : b.reaches.back().id);
        side.slope = std::min(0.02, s * (1 + j));
        side.width = std::isnan(w) ? 2.0 : w;
        side.n = 0.045 + 0.01 * j;
        side.side = 2.0;
      }
    }
    to = id;  // `r` may dangle after the side branch was added
    bottom = top;
  }
  return to;
}

std::vector<Reach> brannoch() {
  Builder b;
  // Main stem: 12 reaches from the outlet northwards.
  Pt bottom{512000.0, 5180000.0};
  std::string to;
  std::vector<std::pair<Pt, std::string>> stem;  // node and the reach below it
  for (int k = 0; k < 12; ++k) {
    const Pt top{bottom.x + b.rng.uniform(-300, 300), bottom.y + b.rng.uniform(1800, 2400)};
    Reach& r = b.add(top, bottom, to);
    r.slope = 0.0005 + 0.00025 * k;
    r.width = 40.0 - 2.4 * k;
    r.n = 0.03 + 0.001 * k;
    r.side = 2.0;
    r.k_h = 0;
    if (k < 4) {  // the lowland reaches have an embanked floodplain
      r.bank_depth = 2.5;
      r.fp_width = 150.0 + 20 * k;
      r.fp_n = 0.05;
    }
    stem.push_back({top, r.id});
    to = r.id;
    bottom = top;
  }
  // Tributary systems at alternate sides of the stem.
  const int junctions[] = {1, 3, 5, 7, 9};
  for (int j = 0; j < 5; ++j) {
    const auto& [node, below] = stem[junctions[j]];
    // The reach above the junction and the tributary both flow into `below`.
    tributary(b, node, below, j % 2 == 0 ? 1.0 : -1.0, 3 + j % 3, 0.0015 + 0.001 * j,
              12.0 - 1.5 * j, j == 2);
  }
  for (auto& r : b.reaches) r.k_h = lineLength(r.line) / 1.5 / 3600.0;  // ~1.5 m/s wave
  return b.reaches;
}

struct Variant {
  bool to_reach = true, slope = true;
  bool channel = true;  ///< false: no channel attributes at all (plain lines: reach_id only)
};

void setReal(OGRFeature& f, const char* name, double v) {
  if (std::isnan(v))
    f.SetFieldNull(f.GetFieldIndex(name));
  else
    f.SetField(name, v);
}

void write(const std::filesystem::path& path, const std::vector<Reach>& reaches, Variant v) {
  const auto tmp = path.string() + ".tmp.gpkg";
  std::filesystem::remove(tmp);
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(drv->Create(tmp.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!ds) throw std::runtime_error("cannot create " + tmp);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);  // WGS 84 / UTM zone 33N; the coordinates are invented
  OGRLayer* layer = ds->CreateLayer("reaches", &srs, wkbLineString, nullptr);
  auto field = [&](const char* name, OGRFieldType t) {
    OGRFieldDefn def(name, t);
    layer->CreateField(&def);
  };
  field("reach_id", OFTString);
  if (v.to_reach) field("to_reach", OFTString);
  if (v.slope) field("slope", OFTReal);
  if (v.channel) {
    for (const char* name : {"manning_n", "bottom_width", "side_slope"}) field(name, OFTReal);
    field("shape", OFTString);
    for (const char* name : {"diameter", "bank_depth", "floodplain_width", "floodplain_n",
                             "muskingum_k_h", "muskingum_x"})
      field(name, OFTReal);
  }
  for (const auto& r : reaches) {
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("reach_id", r.id.c_str());
    OGRLineString line;
    for (const auto& p : r.line) line.addPoint(std::round(p.x * 100) / 100, std::round(p.y * 100) / 100);
    f.SetGeometry(&line);
    if (!v.channel) {
      if (layer->CreateFeature(&f) != OGRERR_NONE) throw std::runtime_error("cannot write " + tmp);
      continue;
    }
    if (v.to_reach) {
      if (r.to.empty())
        f.SetFieldNull(f.GetFieldIndex("to_reach"));
      else
        f.SetField("to_reach", r.to.c_str());
    }
    if (v.slope) setReal(f, "slope", r.slope);
    setReal(f, "manning_n", r.n);
    setReal(f, "bottom_width", r.width);
    setReal(f, "side_slope", r.side);
    f.SetField("shape", r.shape.c_str());
    setReal(f, "diameter", r.diameter);
    setReal(f, "bank_depth", r.bank_depth);
    setReal(f, "floodplain_width", r.fp_width);
    setReal(f, "floodplain_n", r.fp_n);
    setReal(f, "muskingum_k_h", r.k_h);
    setReal(f, "muskingum_x", r.x);
    if (layer->CreateFeature(&f) != OGRERR_NONE) throw std::runtime_error("cannot write " + tmp);
  }
  ds.reset();  // flush and close before the rename
  std::filesystem::rename(tmp, path);
}

/// The bed elevation of every vertex: the outlet's bottom at 100 m, each
/// reach rising upstream at its own slope from the top of the reach it
/// flows into (reaches are listed downstream first).
std::vector<std::vector<double>> bedElevations(const std::vector<Reach>& reaches) {
  std::vector<std::vector<double>> z(reaches.size());
  auto index = [&](const std::string& id) {
    for (std::size_t k = 0; k < reaches.size(); ++k)
      if (reaches[k].id == id) return k;
    throw std::runtime_error("no reach " + id);
  };
  for (std::size_t k = 0; k < reaches.size(); ++k) {
    const Reach& r = reaches[k];
    const double bottom = r.to.empty() ? 100.0 : z[index(r.to)].front();
    if (!r.to.empty() && z[index(r.to)].empty()) throw std::runtime_error("reach order: " + r.id);
    std::vector<double>& zr = z[k];
    zr.assign(r.line.size(), bottom);
    for (std::size_t i = r.line.size() - 1; i-- > 0;)
      zr[i] = zr[i + 1] + r.slope * std::hypot(r.line[i + 1].x - r.line[i].x, r.line[i + 1].y - r.line[i].y);
  }
  return z;
}

/// An invented DEM of the catchment (GeoTIFF, 30 m cells, EPSG:32633): a
/// valley floor 60 m either side of every line at the line's bed elevation
/// (the nearest point of the nearest line), rising 5 % beyond it.
void writeDem(const std::filesystem::path& path, const std::vector<Reach>& reaches) {
  const auto z = bedElevations(reaches);
  double x0 = 1e300, x1 = -1e300, y0 = 1e300, y1 = -1e300;
  for (const auto& r : reaches)
    for (const auto& p : r.line) {
      x0 = std::min(x0, p.x), x1 = std::max(x1, p.x);
      y0 = std::min(y0, p.y), y1 = std::max(y1, p.y);
    }
  const double cell = 30, margin = 1500;
  x0 = std::floor((x0 - margin) / cell) * cell, y1 = std::ceil((y1 + margin) / cell) * cell;
  const int nx = static_cast<int>(std::ceil((x1 + margin - x0) / cell));
  const int ny = static_cast<int>(std::ceil((y1 - (y0 - margin)) / cell));
  std::vector<float> grid(static_cast<std::size_t>(nx) * ny);
  for (int j = 0; j < ny; ++j)
    for (int i = 0; i < nx; ++i) {
      const double x = x0 + (i + 0.5) * cell, y = y1 - (j + 0.5) * cell;
      double best = 1e300, zb = 0;
      for (std::size_t k = 0; k < reaches.size(); ++k) {
        const auto& l = reaches[k].line;
        for (std::size_t v = 1; v < l.size(); ++v) {
          const double dx = l[v].x - l[v - 1].x, dy = l[v].y - l[v - 1].y;
          const double t = std::clamp(((x - l[v - 1].x) * dx + (y - l[v - 1].y) * dy) / (dx * dx + dy * dy), 0.0, 1.0);
          const double d = std::hypot(l[v - 1].x + t * dx - x, l[v - 1].y + t * dy - y);
          if (d < best) best = d, zb = z[k][v - 1] + t * (z[k][v] - z[k][v - 1]);
        }
      }
      grid[static_cast<std::size_t>(j) * nx + i] = static_cast<float>(zb + 0.05 * std::max(0.0, best - 60.0));
    }
  const auto tmp = path.string() + ".tmp.tif";
  std::filesystem::remove(tmp);
  char** opts = nullptr;
  opts = CSLSetNameValue(opts, "COMPRESS", "DEFLATE");
  opts = CSLSetNameValue(opts, "PREDICTOR", "3");
  opts = CSLSetNameValue(opts, "TILED", "YES");
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GTiff");
  GDALDatasetUniquePtr ds(drv->Create(tmp.c_str(), nx, ny, 1, GDT_Float32, opts));
  CSLDestroy(opts);
  if (!ds) throw std::runtime_error("cannot create " + tmp);
  double gt[6] = {x0, cell, 0, y1, 0, -cell};
  ds->SetGeoTransform(gt);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);
  ds->SetSpatialRef(&srs);
  if (ds->GetRasterBand(1)->RasterIO(GF_Write, 0, 0, nx, ny, grid.data(), nx, ny, GDT_Float32, 0, 0) != CE_None)
    throw std::runtime_error("cannot write " + tmp);
  ds.reset();
  std::filesystem::rename(tmp, path);
}

/// Distance (m) along a line from its downstream end, and the point and
/// the upstream direction there.
struct Station {
  Pt p, up;
};
Station upstreamFrom(const std::vector<Pt>& line, double s) {
  for (std::size_t i = line.size() - 1; i > 0; --i) {
    const Pt a = line[i], b = line[i - 1];  // walking upstream from a to b
    const double len = std::hypot(b.x - a.x, b.y - a.y);
    const Pt u{(b.x - a.x) / len, (b.y - a.y) / len};
    if (s <= len || i == 1) return {{a.x + s * u.x, a.y + s * u.y}, u};
    s -= len;
  }
  throw std::runtime_error("empty line");
}

/// The demo reservoir: a dam across the valley where R14 flows into R13
/// (the bottom of R14), its lake reaching `length` metres up R14's valley,
/// `width` metres wide at the dam and narrowing to a round head (the union
/// of discs along the line, cut straight across at the dam). The dam stands
/// 30 m below the node, so that the node (R14's downstream end, R13's
/// upstream end) lies inside the outline and R14's upstream end far outside.
OGRPolygon reservoirOutline(const Reach& above, double length, double width) {
  const Station dam = upstreamFrom(above.line, 0.0);
  OGRMultiPolygon discs;
  for (double s = 0; s <= length; s += 25) {
    const Station st = upstreamFrom(above.line, s);
    const double r = 0.5 * width * std::sqrt(std::max(0.0, 1.0 - std::pow(s / length, 2.0)));
    if (r < 5) continue;
    OGRPoint c(st.p.x, st.p.y);
    discs.addGeometryDirectly(c.Buffer(r, 16));
  }
  std::unique_ptr<OGRGeometry> lake(discs.UnionCascaded());
  // Keep what lies upstream of the dam line (30 m below the node, across the valley).
  const Pt d = dam.up, n{-d.y, d.x};
  const Pt o{dam.p.x - 30 * d.x, dam.p.y - 30 * d.y};
  const double big = 10 * (length + width);
  OGRLinearRing ring;
  ring.addPoint(o.x + big * n.x, o.y + big * n.y);
  ring.addPoint(o.x + big * n.x + big * d.x, o.y + big * n.y + big * d.y);
  ring.addPoint(o.x - big * n.x + big * d.x, o.y - big * n.y + big * d.y);
  ring.addPoint(o.x - big * n.x, o.y - big * n.y);
  ring.closeRings();
  OGRPolygon half;
  half.addRing(&ring);
  std::unique_ptr<OGRGeometry> cut(lake ? lake->Intersection(&half) : nullptr);
  if (!cut || wkbFlatten(cut->getGeometryType()) != wkbPolygon)
    throw std::runtime_error("the reservoir outline is not one polygon (GDAL needs GEOS here)");
  std::unique_ptr<OGRGeometry> simple(cut->SimplifyPreserveTopology(2.0));
  OGRPolygon out;
  OGRLinearRing rounded;
  for (const OGRPoint& p : *simple->toPolygon()->getExteriorRing())
    rounded.addPoint(std::round(p.getX() * 100) / 100, std::round(p.getY() * 100) / 100);
  rounded.closeRings();
  out.addRing(&rounded);
  if (!out.IsValid()) throw std::runtime_error("the reservoir outline is not a valid polygon");
  return out;
}

/// lakes.gpkg: the demo reservoir RES1 on the tributary R13–R17, a dam
/// with a free spillway (a broad-crested weir: crest 6 m above the bed at
/// the dam, 10 m long; the coefficient left to its default).
void writeLakes(const std::filesystem::path& path, const std::vector<Reach>& reaches) {
  const auto z = bedElevations(reaches);
  std::size_t r14 = reaches.size(), r13 = reaches.size();
  for (std::size_t k = 0; k < reaches.size(); ++k) {
    if (reaches[k].id == "R14") r14 = k;
    if (reaches[k].id == "R13") r13 = k;
  }
  if (r14 == reaches.size() || r13 == reaches.size() || reaches[r14].to != "R13")
    throw std::runtime_error("the reservoir's reaches R13 and R14 are not where expected");
  const double bed = z[r13].front();  // the bed at the dam: R13's top
  const OGRPolygon outline = reservoirOutline(reaches[r14], 1050.0, 380.0);

  const auto tmp = path.string() + ".tmp.gpkg";
  std::filesystem::remove(tmp);
  GDALDriver* drv = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(drv->Create(tmp.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!ds) throw std::runtime_error("cannot create " + tmp);
  OGRSpatialReference srs;
  srs.importFromEPSG(32633);  // as the network
  OGRLayer* layer = ds->CreateLayer("lakes", &srs, wkbPolygon, nullptr);
  OGRFieldDefn id("lake_id", OFTString);
  layer->CreateField(&id);
  for (const char* name : {"crest_level_m", "weir_length_m", "bottom_level_m"}) {
    OGRFieldDefn f(name, OFTReal);
    layer->CreateField(&f);
  }
  OGRFeature f(layer->GetLayerDefn());
  f.SetField("lake_id", "RES1");
  f.SetField("crest_level_m", std::round((bed + 6.0) * 100) / 100);
  f.SetField("weir_length_m", 10.0);
  f.SetField("bottom_level_m", std::round(bed * 100) / 100);
  f.SetGeometry(&outline);
  if (layer->CreateFeature(&f) != OGRERR_NONE) throw std::runtime_error("cannot write " + tmp);
  ds.reset();
  std::filesystem::rename(tmp, path);
  std::printf("reservoir RES1: %.0f m2, crest %.2f m, bed %.2f m\n", outline.get_Area(), bed + 6.0, bed);
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const std::filesystem::path out =
        argc > 1 ? std::filesystem::path(argv[1]) : std::filesystem::path(__FILE__).parent_path();
    GDALAllRegister();
    CPLSetConfigOption("OGR_CURRENT_DATE", "2026-01-01T00:00:00.000Z");  // stable metadata
    const auto net = brannoch();
    write(out / "network.gpkg", net, {});

    // cycle.gpkg: the outlet reach drains back into the third stem reach (R1 -> R3 -> R2 -> R1).
    auto cycle = net;
    cycle[0].to = "R3";
    write(out / "cycle.gpkg", cycle, {});

    // gap.gpkg: no to_reach field, and the first tributary stops 20 m short of its confluence
    // (beyond the 5 m default snap tolerance, within the 50 m gap search).
    auto gap = net;
    for (auto& r : gap)
      if (r.id == "R13") r.line.back().x += 20.0;
    write(out / "gap.gpkg", gap, {false, true});

    write(out / "missing_field.gpkg", net, {true, false});

    // plain.gpkg + dem.tif: the same lines with nothing but their ids, and
    // a DEM whose valleys follow them (for `reachwise prepare`).
    write(out / "plain.gpkg", net, {false, false, false});
    writeDem(out / "dem.tif", net);

    // lakes.gpkg: the demo's reservoir (`reachwise demo` routes through it).
    writeLakes(out / "lakes.gpkg", net);
    std::printf("wrote %zu reaches to %s\n", net.size(), out.string().c_str());
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "reachwise_make_sample: %s\n", e.what());
    return 1;
  }
}
