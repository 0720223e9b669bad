// Acceptance: plain river lines route without hand fixes. A regional line
// layer with geometry and channel attributes only (no to_reach) is generated
// from a known tree of reaches, then degraded the way digitised hydrography
// comes: tributaries ending on a stem without a vertex, ends a few metres
// short of or past the stem, a few far misses that the run file joins, lines
// digitised upstream, a delta with two mouths, a braid, a tributary cut at
// the region's edge, a lake the stem stops at, and headwaters that end near
// another line without joining it. `reachwise check` and `reachwise route`
// must rebuild the tree (docs/formats.md, "Topology" and "Config").
#include <fmt/format.h>
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogr_spatialref.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <optional>
#include <random>
#include <regex>
#include <set>
#include <stdexcept>
#include <string>
#include <vector>

#include "io/NetworkFixtures.hpp"
#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace {

using testsupport::summaryValue;
namespace fs = std::filesystem;

// ---------------------------------------------------------------- plane geometry (metres, UTM 33N)

struct XY {
  double x = 0, y = 0;
};
XY operator+(XY a, XY b) { return {a.x + b.x, a.y + b.y}; }
XY operator-(XY a, XY b) { return {a.x - b.x, a.y - b.y}; }
XY operator*(double k, XY a) { return {k * a.x, k * a.y}; }
double dot(XY a, XY b) { return a.x * b.x + a.y * b.y; }
double norm(XY a) { return std::hypot(a.x, a.y); }
using Polyline = std::vector<XY>;

double length(const Polyline& l) {
  double s = 0;
  for (std::size_t i = 1; i < l.size(); ++i) s += norm(l[i] - l[i - 1]);
  return s;
}

double distance(XY p, const Polyline& l) {
  double best = INFINITY;
  for (std::size_t i = 1; i < l.size(); ++i) {
    const XY d = l[i] - l[i - 1];
    const double t = std::clamp(dot(p - l[i - 1], d) / dot(d, d), 0.0, 1.0);
    best = std::min(best, norm(p - (l[i - 1] + t * d)));
  }
  return best;
}

/// The line cut at the given distances along it (ascending, inside it).
std::vector<Polyline> cut(const Polyline& l, const std::vector<double>& at) {
  std::vector<Polyline> pieces(1, Polyline{l.front()});
  double s = 0;
  std::size_t next = 0;
  for (std::size_t i = 1; i < l.size(); ++i) {
    const double seg = norm(l[i] - l[i - 1]);
    while (next < at.size() && at[next] < s + seg) {
      const XY p = l[i - 1] + ((at[next] - s) / seg) * (l[i] - l[i - 1]);
      pieces.back().push_back(p);
      pieces.push_back({p});
      ++next;
    }
    pieces.back().push_back(l[i]);
    s += seg;
  }
  return pieces;
}

XY pointAlong(const Polyline& l, double s) { return cut(l, {s}).front().back(); }

/// Moves the last vertex along the last segment: d > 0 past it, d < 0 back.
Polyline shiftEnd(Polyline l, double d) {
  const XY dir = l.back() - l[l.size() - 2];
  l.back() = l.back() + (d / norm(dir)) * dir;
  return l;
}

/// Reproducible on every platform: the engine's raw output, our own transform.
class Rng {
public:
  explicit Rng(std::uint64_t seed) : g_(seed) {}
  double uniform(double a, double b) { return a + (b - a) * static_cast<double>(g_() >> 11) * 0x1.0p-53; }
  bool chance(double p) { return uniform(0, 1) < p; }

private:
  std::mt19937_64 g_;
};

// ---------------------------------------------------------------- the scenario

enum class Fault { None, Short, Past, FarShort, FarPast };

/// One line of the layer and its truth.
struct Line {
  std::string id;
  Polyline course;           ///< the true line, in flow direction, ends on the lines it joins
  std::string into;          ///< the line whose interior its downstream end joins ("" = at line ends)
  double into_at = 0;        ///< where: metres along `into`'s course from its top
  bool reversed = false;     ///< digitised from its downstream end
  Fault fault = Fault::None; ///< how its downstream end misses `into`
  double miss_m = 0;         ///< by how many metres
  std::optional<double> split;
  double width = 5, slope = 0.002, n = 0.04;
  bool edge_headwater = false;  ///< its top is cut at the region's edge
  bool near_miss_head = false;  ///< its top ends near another line on purpose

  /// As digitised: the end moved by the fault, the lake crossing left out, reversed.
  Polyline digitised(bool lake) const {
    Polyline l = course;
    if (lake) l.pop_back();
    if (fault == Fault::Short || fault == Fault::FarShort) l = shiftEnd(l, -miss_m);
    if (fault == Fault::Past || fault == Fault::FarPast) l = shiftEnd(l, miss_m);
    if (reversed) std::reverse(l.begin(), l.end());
    return l;
  }
  bool farGap() const { return fault == Fault::FarShort || fault == Fault::FarPast; }
};

Line named(std::string id, Polyline course) {
  Line l;
  l.id = std::move(id);
  l.course = std::move(course);
  return l;
}

constexpr double kPi = 3.14159265358979323846;
constexpr double kTop = 5560000;                  // northing of the main stem's source
constexpr double kWestEdge = 492000, kEastEdge = 508000;  // the region's sides
constexpr double kLakeM = 400;                    // the stem stops at a lake shore and restarts this far on
constexpr double kGapSearchM = 500;               // the run file's gap_search_m (above the lake, below the near-misses)
constexpr std::uint64_t kSeed = 20260517;

/// The main stem's centre line: x as a function of northing, straight
/// between vertices every 500 m.
double stemX(double y) { return 500000 + 150 * std::sin(y / 2700) + 80 * std::sin(y / 1100); }
XY stemAt(double y) {
  const double g0 = std::floor(y / 500) * 500, t = (y - g0) / 500;
  return {stemX(g0) + t * (stemX(g0 + 500) - stemX(g0)), y};
}
Polyline stemCourse(double y0, double y1) {  // y0 > y1: in flow direction
  Polyline l{stemAt(y0)};
  for (double g = std::ceil(y0 / 500) * 500 - 500; g > y1; g -= 500)
    if (g < y0) l.push_back(stemAt(g));
  l.push_back(stemAt(y1));
  return l;
}

struct Scenario {
  std::vector<Line> lines;
  std::vector<std::string> outlets;  ///< the delta's two mouths
  std::string top;                   ///< the main stem's top line (forcing enters there)
  std::string lake_from;             ///< the stem line ending at the lake shore
  std::string lake_below;            ///< the stem line starting below the lake
  XY lake_to;                        ///< where the stem restarts below the lake
  std::string braid_back, delta_w, delta_e;

  const Line& line(const std::string& id) const {
    for (const auto& l : lines)
      if (l.id == id) return l;
    throw std::runtime_error("no line " + id);
  }
  /// Where each line is cut: the distances along it at which other lines join its interior.
  std::vector<double> cutsOf(const std::string& id) const {
    std::vector<double> at;
    for (const auto& l : lines)
      if (l.into == id) at.push_back(l.into_at);
    std::sort(at.begin(), at.end());
    return at;
  }
  std::size_t cutCount() const {
    std::size_t n = 0;
    for (const auto& l : lines) n += !l.into.empty();
    return n;
  }
  std::string pieceId(const std::string& id, std::size_t k) const {  // k 0-based, from the top
    return cutsOf(id).empty() ? id : fmt::format("{}.{}", id, k + 1);
  }
  /// The expected reaches: id -> (downstream ids, true course, line).
  struct Reach {
    std::set<std::string> down;
    Polyline course;
    std::string line;
  };
  std::map<std::string, Reach> reaches() const {
    std::map<std::string, Reach> out;
    for (const auto& l : lines) {
      const auto at = cutsOf(l.id);
      const auto pieces = cut(l.course, at);
      for (std::size_t k = 0; k < pieces.size(); ++k) {
        Reach r{{}, pieces[k], l.id};
        if (k + 1 < pieces.size()) {
          r.down.insert(pieceId(l.id, k + 1));
        } else if (!l.into.empty()) {  // the piece of `into` below the join
          const auto in = cutsOf(l.into);
          const auto below = static_cast<std::size_t>(std::upper_bound(in.begin(), in.end(), l.into_at) - in.begin());
          r.down.insert(pieceId(l.into, below));
        } else {  // lines starting where this one ends
          for (const auto& m : lines)
            if (&m != &l && norm(m.course.front() - l.course.back()) < 1e-6) r.down.insert(pieceId(m.id, 0));
        }
        out[pieceId(l.id, k)] = r;
      }
    }
    return out;
  }
};

/// The invented basin: a main stem flowing south over about 45 km, with
/// tributaries leaving it alternately to the east and west every 2-2.6 km
/// at 30 degrees above the horizontal, each one to three lines of 1-4 km,
/// and side tributaries of 1-2.3 km leaving them 45 degrees further north.
/// Same-side tributaries are at least 4 km apart along the stem, so their
/// lines lie at least 4 km x cos 30 - 2.3 km x sin 45 = 1.8 km apart.
Scenario makeScenario() {
  Rng rng(kSeed);
  Scenario sc;
  auto add = [&](Line l) { sc.lines.push_back(std::move(l)); };
  // The main stem: s01 (the top, forced long enough to hold a junction and
  // digitised upstream) ... s08 ends at a lake shore, s09 restarts 400 m
  // on; s14 ends at a braid of b1 and b2 (2 km), s15 starts below it;
  // s18 ends where the delta's distributaries dw and de leave.
  struct Span {
    std::string id;
    double y0, y1;
  };
  std::vector<Span> stem;
  double y = kTop, y_lake = 0, y_braid = 0, y_delta = 0;
  for (int i = 1; i <= 18; ++i) {
    const double len = i == 1 ? 3500 : rng.uniform(1500, 3500);
    Line s;
    s.id = fmt::format("s{:02d}", i);
    s.course = stemCourse(y, y - len);
    s.width = 40, s.slope = 0.0008, s.n = 0.035;
    stem.push_back({s.id, y, y - len});
    y -= len;
    if (i == 8) {  // the true course crosses the lake in a straight line
      y_lake = y;
      sc.lake_from = s.id;
      sc.lake_to = stemAt(y - kLakeM);
      s.course.push_back(sc.lake_to);
      y -= kLakeM;
    }
    if (i == 9) sc.lake_below = s.id;
    add(std::move(s));
    if (i == 14) {  // the braid: b1 follows the stem's centre line, b2 bows 450 m east
      y_braid = y;
      const XY a = stemAt(y), b = stemAt(y - 2000);
      Line b1 = named("b1", stemCourse(y, y - 2000));
      b1.split = 0.7, b1.width = 28, b1.slope = 0.0008, b1.n = 0.035;
      Line b2 = named("b2", {a, a + XY{450, -600}, b + XY{450, 600}, b});
      b2.split = 0.3, b2.width = 12, b2.slope = 0.0008, b2.n = 0.035;
      b2.reversed = true;  // one arm digitised backwards
      add(std::move(b1));
      add(std::move(b2));
      sc.braid_back = "b2";
      y -= 2000;
    }
  }
  y_delta = y;
  {
    const XY d = stemAt(y);
    // The bifurcation shares are given explicitly in the layer's split field.
    Line dw = named("dw", {d, d + XY{-700, -1200}, d + XY{-1300, -2500}});
    dw.split = 0.6, dw.width = 25, dw.slope = 0.0008, dw.n = 0.035;
    Line de = named("de", {d, d + XY{800, -1100}, d + XY{1500, -2300}});
    de.split = 0.4, de.width = 18, de.slope = 0.0008, de.n = 0.035;
    add(std::move(dw));
    add(std::move(de));
    sc.delta_w = "dw", sc.delta_e = "de";
    sc.outlets = {"dw", "de"};
  }
  sc.top = "s01";

  auto forbidden = [&](double ya) {
    return ya > kTop - 1500 || std::abs(ya - y_lake) < 1500 || std::abs(ya - (y_lake - kLakeM)) < 1500 ||
           (ya < y_braid + 1500 && ya > y_braid - 2000 - 1500) || ya < y_delta + 1000;
  };
  int side = 1, trib = 0, sub = 0, near = 0;
  std::vector<std::size_t> on_stem_interior;  // tributary mouths on a stem line's interior
  for (double ya = kTop - 2000; ya > y_delta + 1000; ya -= rng.uniform(2000, 2600)) {
    if (forbidden(ya)) continue;
    const auto span = std::find_if(stem.begin(), stem.end(), [&](const Span& s) { return ya < s.y0 && ya > s.y1; });
    if (span == stem.end()) continue;
    bool at_joint = false;
    if (span->y0 - ya < 300 || ya - span->y1 < 300) {
      // Near a line end: join at the node between two stem lines, if plain.
      const double yj = span->y0 - ya < 300 ? span->y0 : span->y1;
      const bool plain = std::any_of(stem.begin(), stem.end(), [&](const Span& s) { return s.y0 == yj; }) &&
                         std::any_of(stem.begin(), stem.end(), [&](const Span& s) { return s.y1 == yj; });
      if (!plain) continue;
      ya = yj;
      at_joint = true;
    }
    const XY p = stemAt(ya);
    const XY t = stemAt(ya - 1) - stemAt(ya + 1);
    const XY nrm = (side / norm(t)) * XY{-t.y, t.x};  // away from the stem
    const XY u{side * std::cos(kPi / 6), std::sin(kPi / 6)};
    const XY v{side * std::cos(5 * kPi / 12), std::sin(5 * kPi / 12)};
    ++trib;
    // Lines from the mouth up; the first meets the stem square for its last 400 m.
    std::vector<std::size_t> idx;
    std::vector<double> from_mouth{0};  // distance of each line's bottom from the mouth
    const int count = 1 + static_cast<int>(rng.uniform(0, 3));
    XY q = p;
    for (int k = 0; k < count; ++k) {
      double len = rng.uniform(1000, 4000);
      const XY base = k == 0 ? p + 400 * nrm : q;
      const double straight = k == 0 ? len - 400 : len;
      XY head = base + straight * u;
      bool edge = false;
      const double edge_x = side > 0 ? kEastEdge : kWestEdge;
      if ((head.x - edge_x) * side > 0) {  // leaves the region: cut at its edge
        head = base + ((edge_x - base.x) / u.x) * u;
        len = (k == 0 ? 400 : 0) + norm(head - base);
        if (len < 1000) break;
        edge = true;
      }
      Line l;
      l.id = fmt::format("t{:02d}{}", trib, static_cast<char>('a' + k));
      l.course = k == 0 ? Polyline{head, base, p} : Polyline{head, q};
      l.width = 10, l.slope = 0.002, l.n = 0.04;
      l.edge_headwater = edge;
      if (k == 0 && !at_joint) {
        l.into = span->id;
        l.into_at = length(stemCourse(span->y0, ya));
      }
      idx.push_back(sc.lines.size());
      add(std::move(l));
      from_mouth.push_back(from_mouth.back() + len);
      q = head;
      if (edge) break;
    }
    if (idx.empty()) continue;
    if (!at_joint) on_stem_interior.push_back(idx.front());
    // Side tributaries, at distances from the tributary's mouth.
    auto addSide = [&](double s, XY dir, double len, bool designed) {
      std::size_t k = 0;
      while (k + 1 < idx.size() && s >= from_mouth[k + 1]) ++k;
      Line l;
      l.width = 4, l.slope = 0.004, l.n = 0.045;
      XY at;
      const Line& host = sc.lines[idx[k]];
      std::size_t joint = 0;  // a node between two of the tributary's lines within 250 m
      for (std::size_t j = 1; j < idx.size(); ++j)
        if (std::abs(s - from_mouth[j]) < 250) joint = j;
      if (joint) {
        at = sc.lines[idx[joint]].course.back();  // the node below line `joint`
      } else {
        l.into = host.id;
        l.into_at = from_mouth[k + 1] - s;
        at = pointAlong(host.course, l.into_at);
      }
      l.id = designed ? fmt::format("n{}", ++near) : fmt::format("u{:02d}", ++sub);
      l.course = {at + len * dir, at};
      l.near_miss_head = designed;
      add(std::move(l));
    };
    double s = 1000;
    if (near < 3 && from_mouth[1] >= 1600) {  // a headwater ending near the stem
      addSide(900, {0, 1}, 1500, true);
      s = 2300;
    }
    for (; s < from_mouth.back() - 500; s += rng.uniform(1400, 2200))
      if (rng.chance(0.6)) addSide(s, v, rng.uniform(1000, 2300), false);
    side = -side;
  }
  // Faults at the tributary mouths on the stem's interior: 2-4 m short or
  // past (joined by the 5 m default tolerance), 30-300 m short or past
  // (joined by the run file).
  const std::vector<Fault> faults{Fault::Short,   Fault::None,    Fault::Past,  Fault::FarShort, Fault::Short,
                                  Fault::FarPast, Fault::None,    Fault::Past,  Fault::FarShort, Fault::Short,
                                  Fault::None,    Fault::FarPast, Fault::Past};
  for (std::size_t i = 0; i < on_stem_interior.size() && i < faults.size(); ++i) {
    Line& l = sc.lines[on_stem_interior[i]];
    l.fault = faults[i];
    l.miss_m = l.farGap() ? rng.uniform(30, 300) : rng.uniform(2, 4);
  }
  // Lines digitised upstream: about a quarter at random, s01 and b2 always, b1 never.
  for (auto& l : sc.lines)
    l.reversed = l.id == "s01" || l.id == "b2" || (l.id != "b1" && rng.chance(0.25));
  return sc;
}

// ---------------------------------------------------------------- files

/// UTM 33N to `epsg` through OGR/PROJ (identity for 32633).
class Crs {
public:
  explicit Crs(int epsg) : epsg_(epsg) {
    reachwise::io::ensureGdal();
    src_.importFromEPSG(32633);
    src_.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    dst_.importFromEPSG(epsg);
    dst_.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);  // lon, lat
    ct_.reset(OGRCreateCoordinateTransformation(&src_, &dst_));
  }
  XY operator()(XY p) const {
    if (epsg_ == 32633) return p;
    double x = p.x, y = p.y;
    if (!ct_ || !ct_->Transform(1, &x, &y)) throw std::runtime_error("PROJ could not transform a point");
    return {x, y};
  }
  int epsg() const { return epsg_; }

private:
  int epsg_;
  OGRSpatialReference src_, dst_;
  std::unique_ptr<OGRCoordinateTransformation> ct_;
};

std::string wkt(const Polyline& l, const Crs& crs) {
  std::string s = "LINESTRING (";
  for (std::size_t i = 0; i < l.size(); ++i) {
    const XY p = crs(l[i]);
    s += fmt::format("{}{} {}", i ? ", " : "", p.x, p.y);
  }
  return s + ")";
}

std::string writeLayer(const Scenario& sc, const fs::path& path, const Crs& crs) {
  fixtures::Layer layer;
  layer.epsg = crs.epsg();
  layer.fields = {{"reach_id", OFTString},   {"slope", OFTReal},      {"manning_n", OFTReal},
                  {"bottom_width", OFTReal}, {"side_slope", OFTReal}, {"split", OFTReal}};
  for (const auto& l : sc.lines) {
    std::optional<std::string> split;
    if (l.split) split = fmt::format("{}", *l.split);
    layer.features.push_back({wkt(l.digitised(l.id == sc.lake_from), crs),
                              {l.id, fmt::format("{}", l.slope), fmt::format("{}", l.n),
                               fmt::format("{}", l.width), "2", split}});
  }
  fs::remove(path);
  fixtures::write(path.string(), "GPKG", {layer});
  return path.string();
}

struct RunOptions {
  bool connections = true;
  bool warn_gaps = false;
  bool base_flow = false;  ///< 0.2 m3/s entering along every line
};

/// The run file: outlets, the gap search, and the known gaps joined.
std::string writeRunFile(const Scenario& sc, const fs::path& path, const Crs& crs, RunOptions o) {
  std::ofstream f(path);
  f << "[network]\n"
    << "orientation = \"outlets\"\n"
    << fmt::format("outlets = [\"{}\", \"{}\"]\n", sc.outlets[0], sc.outlets[1])
    << fmt::format("gap_search_m = {}\n", kGapSearchM);
  if (o.warn_gaps) f << "unresolved_gaps = \"warn\"\n";
  if (o.base_flow) f << "\n[network.fields]\nbase_flow = { default = 0.2 }\n";
  if (o.connections) {
    for (const auto& l : sc.lines)
      if (l.farGap()) f << fmt::format("\n[[network.connect]]\nfrom = \"{}\"\nto = \"{}\"\n", l.id, l.into);
    const XY p = crs(sc.lake_to);
    f << fmt::format("\n[[network.connect]]\nfrom = \"{}\"\nto = [{}, {}]\n", sc.lake_from, p.x, p.y);
  }
  return path.string();
}

/// Problem lines on stderr: `severity code reach_id fid (x, y): sentence`.
struct ProblemLine {
  std::string severity, code, reach, message;
};
std::vector<ProblemLine> problemLines(const std::string& err) {
  std::vector<ProblemLine> out;
  const std::regex line(R"((info|warning|error) (\w+) (\S+) (\d+|-) \(([-\d.e+]+|-), ([-\d.e+]+|-)\): ([^\n]*))");
  for (std::sregex_iterator it(err.begin(), err.end(), line), end; it != end; ++it)
    out.push_back({(*it)[1], (*it)[2], (*it)[3], (*it)[7]});
  return out;
}

/// The line a reach id belongs to: `t03a.2` -> `t03a`.
std::string lineOf(const std::string& reach) {
  const auto dot = reach.find('.');
  return dot == std::string::npos ? reach : reach.substr(0, dot);
}

std::set<std::string> linesWith(const std::vector<ProblemLine>& ps, const std::string& code) {
  std::set<std::string> out;
  for (const auto& p : ps)
    if (p.code == code) out.insert(lineOf(p.reach));
  return out;
}

std::set<std::string> splitIds(const std::string& s) {
  std::set<std::string> out;
  std::size_t a = 0;
  while (a < s.size()) {
    const auto b = std::min(s.find(';', a), s.size());
    if (b > a) out.insert(s.substr(a, b - a));
    a = b + 1;
  }
  return out;
}

GDALDatasetUniquePtr open(const std::string& path) {
  reachwise::io::ensureGdal();
  return GDALDatasetUniquePtr(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
}

/// The `network` layer of `check --problems`: each reach's links as built.
struct Built {
  std::map<std::string, std::set<std::string>> down;
  std::map<std::string, bool> flipped;
  std::map<std::string, double> planar_m;  ///< planar length of the drawn line (CRS units)
};
Built readNetworkLayer(const std::string& path) {
  Built b;
  const auto ds = open(path);
  if (!ds) return b;
  OGRLayer* layer = ds->GetLayerByName("network");
  if (!layer) return b;
  for (const auto& f : *layer) {
    const std::string id = f->GetFieldAsString("reach_id");
    b.down[id] = f->IsFieldSetAndNotNull(f->GetFieldIndex("to_reach")) ? splitIds(f->GetFieldAsString("to_reach"))
                                                                      : std::set<std::string>{};
    b.flipped[id] = f->GetFieldAsInteger("flipped") != 0;
    if (const auto* g = f->GetGeometryRef(); g && wkbFlatten(g->getGeometryType()) == wkbLineString)
      b.planar_m[id] = g->toLineString()->get_Length();
  }
  return b;
}

struct NearMissRow {
  std::string other;
  double distance_m;
};
std::map<std::string, NearMissRow> readNearMisses(const std::string& path) {
  std::map<std::string, NearMissRow> out;
  const auto ds = open(path);
  if (!ds || !ds->GetLayerByName("problems")) return out;
  for (const auto& f : *ds->GetLayerByName("problems"))
    if (std::string(f->GetFieldAsString("code")) == "near_miss")
      out[f->GetFieldAsString("reach_id")] = {f->GetFieldAsString("other_reach"), f->GetFieldAsDouble("distance_m")};
  return out;
}

class PlainLines : public ::testing::Test {
protected:
  const Scenario sc_ = makeScenario();
  const std::map<std::string, Scenario::Reach> truth_ = sc_.reaches();
  const fs::path dir_ = testsupport::testScratchDir();
  const Crs utm_{32633};

  std::set<std::string> expectedOutlets() const {
    std::set<std::string> out;
    for (const auto& [id, r] : truth_)
      if (r.down.empty()) out.insert(id);
    return out;
  }
  std::set<std::string> expectedHeadwaters() const {
    std::set<std::string> fed, out;
    for (const auto& [id, r] : truth_) fed.insert(r.down.begin(), r.down.end());
    for (const auto& [id, r] : truth_)
      if (!fed.count(id)) out.insert(id);
    return out;
  }
};

}  // namespace

// The generator's own promises, checked on the truth before the program
// sees it: if these fail, the scenario (not the program) is at fault.
TEST_F(PlainLines, TheGeneratedScenarioIsWhatItClaims) {
  EXPECT_GE(sc_.lines.size(), 60u);
  EXPECT_LE(sc_.lines.size(), 120u);
  std::map<Fault, int> faults;
  for (const auto& l : sc_.lines) ++faults[l.fault];
  EXPECT_GE(faults[Fault::Short] + faults[Fault::Past], 4);
  EXPECT_GE(faults[Fault::FarShort], 2);
  EXPECT_GE(faults[Fault::FarPast], 2);
  int reversed = 0, edges = 0, near = 0, clean_t = 0, stem_t = 0;
  for (const auto& l : sc_.lines) {
    reversed += l.reversed;
    edges += l.edge_headwater;
    near += l.near_miss_head;
    clean_t += !l.into.empty() && l.fault == Fault::None;
    stem_t += !l.into.empty() && l.fault == Fault::None && l.into[0] == 's';
    const double len = length(l.course);
    if (l.id != sc_.lake_from) {  // reaches of 1-4 km (the braid's bowed arm a little more)
      EXPECT_GE(len, 999) << l.id;
      EXPECT_LE(len, l.id == "b2" ? 2600 : 4001) << l.id;
    }
  }
  EXPECT_GE(reversed, 10);
  EXPECT_GE(edges, 1);
  EXPECT_EQ(near, 3);
  EXPECT_GE(clean_t, 4);
  EXPECT_GE(stem_t, 2);
  EXPECT_FALSE(sc_.cutsOf(sc_.top).empty()) << "the top stem line must be cut";
  // Free ends (headwater tops and the mouths) lie farther than the gap
  // search from every line they do not join, the designed near-misses
  // within 1000 m, with one line clearly nearest.
  const auto heads = expectedHeadwaters();
  for (const auto& [id, r] : truth_) {
    std::vector<XY> free_ends;
    if (heads.count(id)) free_ends.push_back(r.course.front());
    if (r.down.empty()) free_ends.push_back(r.course.back());
    for (const XY p : free_ends) {
      std::vector<double> d;
      for (const auto& [oid, o] : truth_) {
        const bool joined = oid == id || r.down.count(oid) || o.down.count(id) ||
                            (o.line == r.line) || norm(o.course.back() - r.course.back()) < 1e-6;
        if (!joined) d.push_back(distance(p, o.course));
      }
      std::sort(d.begin(), d.end());
      if (sc_.line(r.line).near_miss_head) {
        EXPECT_GT(d[0], kGapSearchM + 50) << id;
        EXPECT_LT(d[0], 1000) << id;
        EXPECT_GT(d[1] - d[0], 50) << id;
      } else {
        EXPECT_GT(d[0], kGapSearchM + 50) << id;
      }
    }
  }
}

// 1. The run file's connections, outlets and gap search are all it takes.
TEST_F(PlainLines, CheckRebuildsTheTrueNetwork) {
  const std::string layer = writeLayer(sc_, dir_ / "plain.gpkg", utm_);
  const std::string run = writeRunFile(sc_, dir_ / "plain.toml", utm_, {});
  const std::string problems = (dir_ / "plain_problems.gpkg").string();
  const auto r = testsupport::runReachwise(fmt::format("check {} --config {} --problems {}", layer, run, problems));
  ASSERT_EQ(r.code, 0) << r.err;
  const auto ps = problemLines(r.err);
  for (const auto& p : ps) EXPECT_NE(p.severity, "error") << p.code << " " << p.reach << ": " << p.message;

  // Reaches: every line plus one per cut; outlets: the delta's two mouths.
  EXPECT_EQ(summaryValue(r.out, "reaches"), std::to_string(sc_.lines.size() + sc_.cutCount()));
  EXPECT_EQ(truth_.size(), sc_.lines.size() + sc_.cutCount());
  EXPECT_EQ(summaryValue(r.out, "outlets"), "2");
  EXPECT_EQ(summaryValue(r.out, "basins"), "1");
  EXPECT_EQ(expectedOutlets(), (std::set<std::string>{sc_.delta_w, sc_.delta_e}));

  // Links, piece by piece, as the truth has them.
  const Built b = readNetworkLayer(problems);
  ASSERT_EQ(b.down.size(), truth_.size());
  for (const auto& [id, t] : truth_) {
    ASSERT_TRUE(b.down.count(id)) << "no reach " << id;
    EXPECT_EQ(b.down.at(id), t.down) << id;
    EXPECT_EQ(b.flipped.at(id), sc_.line(t.line).reversed) << id;
    // Cut where the tributaries join: each piece as long as its true course,
    // up to the ends moved by snapping (at most the 5 m tolerance).
    EXPECT_NEAR(b.planar_m.at(id), length(t.course), 5.0) << id;
  }
  for (const auto& id : expectedHeadwaters())
    for (const auto& [other, down] : b.down) EXPECT_FALSE(down.count(id)) << other << " flows into headwater " << id;
  // The braid: the arm digitised backwards is turned, and both arms leave one node and meet again.
  EXPECT_TRUE(b.flipped.at(sc_.braid_back));
  EXPECT_EQ(b.down.at(sc_.braid_back), truth_.at("b1").down);

  // Problems: every reversed line flipped, every junction on a line's
  // interior a split naming the pieces either side and the joining line,
  // every connection added.
  std::set<std::string> reversed, joined_by_run_file{sc_.lake_from};
  for (const auto& l : sc_.lines) {
    if (l.reversed) reversed.insert(l.id);
    if (l.farGap()) joined_by_run_file.insert(l.id);
  }
  EXPECT_EQ(linesWith(ps, "flipped_line"), reversed);
  EXPECT_EQ(linesWith(ps, "added_connection"), joined_by_run_file);
  std::size_t splits = 0;
  for (const auto& p : ps) splits += p.code == "split_line";
  EXPECT_EQ(splits, sc_.cutCount());
  for (const auto& l : sc_.lines) {
    if (l.into.empty()) continue;
    const auto at = sc_.cutsOf(l.into);
    const auto k = static_cast<std::size_t>(std::lower_bound(at.begin(), at.end(), l.into_at) - at.begin());
    const std::string want = fmt::format("line {} is cut between {}.{} and {}.{} where the end of {} meets it", l.into,
                                         l.into, k + 1, l.into, k + 2, l.id);
    EXPECT_TRUE(std::any_of(ps.begin(), ps.end(),
                            [&](const ProblemLine& p) { return p.code == "split_line" && p.message == want; }))
        << want;
  }
  for (const char* code : {"probable_gap", "unresolved_gap", "unknown_outlet", "outlet_not_at_end", "closed_line"})
    EXPECT_TRUE(linesWith(ps, code).empty()) << code;

  // The headwaters that end near another line stay headwaters, each a
  // near-miss point at its true distance from the line it nearly meets.
  const auto near = readNearMisses(problems);
  for (const auto& l : sc_.lines) {
    if (!l.near_miss_head) continue;
    std::string nearest;
    double best = INFINITY;
    for (const auto& [oid, o] : truth_) {
      const double d = distance(l.course.front(), o.course);
      if (o.line != l.id && o.line != l.into && d < best) best = d, nearest = oid;
    }
    ASSERT_TRUE(near.count(l.id)) << l.id;
    EXPECT_EQ(near.at(l.id).other, nearest) << l.id;
    EXPECT_NEAR(near.at(l.id).distance_m, best, 1.0) << l.id;
    EXPECT_TRUE(expectedHeadwaters().count(l.id)) << l.id;
  }
}

// 2. The far gaps, unjoined, are errors naming each one; warnings on request.
TEST_F(PlainLines, WithoutTheConnectionsEachFarGapIsNamed) {
  const std::string layer = writeLayer(sc_, dir_ / "gaps.gpkg", utm_);
  // The lake's two shores are within the search too (400 m apart).
  std::set<std::string> gaps{sc_.lake_from, sc_.lake_below};
  std::map<std::string, double> miss;
  for (const auto& l : sc_.lines)
    if (l.farGap()) gaps.insert(l.id), miss[l.id] = l.miss_m;
  ASSERT_EQ(gaps.size(), 2 + miss.size());

  const auto err = testsupport::runReachwise(fmt::format(
      "check {} --config {}", layer, writeRunFile(sc_, dir_ / "gaps_error.toml", utm_, {false, false})));
  EXPECT_EQ(err.code, 1) << err.err;
  const auto ps = problemLines(err.err);
  EXPECT_EQ(linesWith(ps, "probable_gap"), gaps);
  EXPECT_TRUE(linesWith(ps, "unresolved_gap").empty());
  // Each far miss is reported at its own distance (short of or past the stem).
  const std::regex dist(R"(is ([\d.e+]+) m from )");
  for (const auto& p : ps) {
    std::smatch m;
    if (p.code != "probable_gap" || !miss.count(lineOf(p.reach))) continue;
    ASSERT_TRUE(std::regex_search(p.message, m, dist)) << p.message;
    EXPECT_NEAR(std::stod(m[1]), miss.at(lineOf(p.reach)), 0.006 * miss.at(lineOf(p.reach)) + 0.05) << p.message;
  }

  const auto warn = testsupport::runReachwise(fmt::format(
      "check {} --config {}", layer, writeRunFile(sc_, dir_ / "gaps_warn.toml", utm_, {false, true})));
  EXPECT_EQ(warn.code, 0) << warn.err;
  const auto ws = problemLines(warn.err);
  EXPECT_EQ(linesWith(ws, "unresolved_gap"), gaps);
  EXPECT_TRUE(linesWith(ws, "probable_gap").empty());
  for (const auto& p : ws) {
    if (p.code == "unresolved_gap") {
      EXPECT_EQ(p.severity, "warning") << p.message;
    }
    EXPECT_NE(p.severity, "error") << p.code << " " << p.message;
  }
}

namespace {

/// Long-form inflow for one line: 10 m3/s, a triangular flood to 150 m3/s
/// peaking at 12 h and back at 36 h, then 10 m3/s to 120 h (hourly).
struct Inflow {
  std::vector<double> q;
  double volume_m3() const {  // trapezoidal over the run, as the forcing is linear between samples
    double v = 0;
    for (std::size_t i = 1; i < q.size(); ++i) v += 0.5 * (q[i - 1] + q[i]) * 3600;
    return v;
  }
};
Inflow writeInflow(const fs::path& path, const std::string& id) {
  Inflow in;
  std::ofstream f(path);
  f << "reach_id,time,discharge\n";
  for (int h = 0; h <= 120; ++h) {
    const double q = h <= 12 ? 10 + 140.0 * h / 12 : h <= 36 ? 150 - 140.0 * (h - 12) / 24 : 10;
    in.q.push_back(q);
    f << fmt::format("{},2026-05-{:02d}T{:02d}:00:00Z,{}\n", id, 1 + h / 24, h % 24, q);
  }
  return in;
}

struct Routed {
  std::map<std::string, double> volume_in, volume_out, storage_change, length_m;
  std::map<std::string, std::string> line_id;  ///< NULL read as ""
  std::vector<std::string> warnings;
  double event_volume_error_pct = NAN;  ///< the network's, from run_info
};
Routed readRouted(const std::string& gpkg) {
  Routed r;
  const auto ds = open(gpkg);
  if (!ds) return r;
  if (OGRLayer* reaches = ds->GetLayerByName("reaches"))
    for (const auto& f : *reaches) {
      const std::string id = f->GetFieldAsString("reach_id");
      r.volume_in[id] = f->GetFieldAsDouble("volume_in_m3");
      r.volume_out[id] = f->GetFieldAsDouble("volume_out_m3");
      r.storage_change[id] = f->GetFieldAsDouble("storage_change_m3");
      r.line_id[id] = f->IsFieldSetAndNotNull(f->GetFieldIndex("line_id")) ? f->GetFieldAsString("line_id") : "";
      // Routing's reach length: its sub-reaches of dx_m each (docs/methods.md, dx = L / m).
      r.length_m[id] = f->GetFieldAsDouble("dx_m") * f->GetFieldAsInteger("subreaches");
    }
  if (OGRLayer* info = ds->GetLayerByName("run_info"))
    for (const auto& f : *info) {
      const std::string key = f->GetFieldAsString("key");
      if (key == "warning") r.warnings.emplace_back(f->GetFieldAsString("value"));
      if (key == "event_volume_error_pct") r.event_volume_error_pct = std::stod(f->GetFieldAsString("value"));
    }
  return r;
}

}  // namespace

// 3. Routing: the inflow named by the top line's own id enters its top
// piece; routing conserves mass, so once the flood has passed the mouths
// carry out what came in, shared as the delta's split says.
TEST_F(PlainLines, RouteConservesTheInflowAndSharesItAtTheDelta) {
  const std::string layer = writeLayer(sc_, dir_ / "route.gpkg", utm_);
  const std::string run = writeRunFile(sc_, dir_ / "route.toml", utm_, {});
  const Inflow in = writeInflow(dir_ / "inflow.csv", sc_.top);
  const std::string out = (dir_ / "route_out.gpkg").string();
  fs::remove(out);
  const auto r = testsupport::runReachwise(fmt::format("route {} --config {} --inflow {} --out {} --hydrographs outlets",
                                                       layer, run, (dir_ / "inflow.csv").string(), out));
  ASSERT_EQ(r.code, 0) << r.err;
  ASSERT_TRUE(fs::exists(out));
  const Routed routed = readRouted(out);
  ASSERT_EQ(routed.volume_out.size(), truth_.size());

  // Each piece names the line it was cut from; whole lines name none.
  for (const auto& [id, t] : truth_)
    EXPECT_EQ(routed.line_id.at(id), sc_.cutsOf(t.line).empty() ? "" : t.line) << id;

  const std::string top_piece = sc_.pieceId(sc_.top, 0);
  EXPECT_NE(top_piece, sc_.top);
  EXPECT_TRUE(std::any_of(routed.warnings.begin(), routed.warnings.end(), [&](const std::string& w) {
    return w.find("cut_line_forcing " + sc_.top) != std::string::npos && w.find(top_piece) != std::string::npos;
  })) << "no cut_line_forcing warning for " << sc_.top;
  const double v_in = in.volume_m3();
  EXPECT_NEAR(routed.volume_in.at(top_piece), v_in, 1e-6 * v_in);
  for (const auto& id : expectedHeadwaters())  // nothing else enters at a top
    if (id != top_piece) {
      EXPECT_EQ(routed.volume_in.at(id), 0.0) << id;
    }

  // 120 h is over three times the flood's 36 h and the stem's travel time
  // (about 50 km at 1-2 m/s: under 14 h): the network is back at its
  // initial 10 m3/s, so storage has returned to its start and what left
  // equals what entered. 1 % is the project's volume bound (docs/methods.md,
  // "Volume balance").
  const auto mouth = [&](const std::string& line) {
    return routed.volume_out.at(sc_.pieceId(line, sc_.cutsOf(line).size()));
  };
  const double out_w = mouth(sc_.delta_w), out_e = mouth(sc_.delta_e);
  EXPECT_NEAR((out_w + out_e) / v_in, 1.0, 0.01);
  EXPECT_NEAR(out_w / (out_w + out_e), *sc_.line(sc_.delta_w).split, 0.01);
  EXPECT_NEAR(out_e / (out_w + out_e), *sc_.line(sc_.delta_e).split, 0.01);
}

// The run's own volume figure (run_info `event_volume_error_pct`) is the
// network's balance: point inflow in, outlets out, storage change summed
// over the reaches, over the event volume (what entered above the initial
// flow; docs/formats.md "Layers and tables", docs/methods.md "Volume
// balance"). Recomputed here from the inflow file itself and the reaches
// layer, the two must agree.
//
// A reach's outflow volume is summed over its own sub-steps, the next
// reach's inflow volume over the hourly samples it is handed, so each
// hand-over gains or loses a little (here 0.6-3.4e3 m3, and about 0.9 % of
// the event over the ~40 hand-overs from s01.1 to the mouths). The run's
// figure must include that, not assume the hand-overs equal, and the run
// must say so in a warning.
TEST_F(PlainLines, TheRunsVolumeErrorCountsTheInflowGiven) {
  const std::string layer = writeLayer(sc_, dir_ / "balance.gpkg", utm_);
  const std::string run = writeRunFile(sc_, dir_ / "balance.toml", utm_, {});
  const Inflow in = writeInflow(dir_ / "inflow.csv", sc_.top);
  const std::string out = (dir_ / "balance_out.gpkg").string();
  fs::remove(out);
  const auto r = testsupport::runReachwise(fmt::format("route {} --config {} --inflow {} --out {} --hydrographs none",
                                                       layer, run, (dir_ / "inflow.csv").string(), out));
  ASSERT_EQ(r.code, 0) << r.err;
  const Routed routed = readRouted(out);
  ASSERT_EQ(routed.volume_out.size(), truth_.size());
  double outlets = 0, storage = 0;
  for (const auto& id : expectedOutlets()) outlets += routed.volume_out.at(id);
  for (const auto& [id, ds] : routed.storage_change) storage += ds;
  const double duration_s = 3600.0 * static_cast<double>(in.q.size() - 1);
  const double event = in.volume_m3() - in.q.front() * duration_s;
  const double expected_pct = 100.0 * (in.volume_m3() - outlets - storage) / event;
  // Where the water is gained: each reach's inflow volume against what its
  // upstream reaches put out (shares at a bifurcation from the layer).
  std::string worst;
  double worst_m3 = 0;
  for (const auto& [id, t] : truth_) {
    double handed = id == sc_.pieceId(sc_.top, 0) ? in.volume_m3() : 0.0;
    for (const auto& [uid, u] : truth_)
      if (u.down.count(id))
        handed += (u.down.size() > 1 ? *sc_.line(t.line).split : 1.0) * routed.volume_out.at(uid);
    if (std::abs(routed.volume_in.at(id) - handed) > std::abs(worst_m3))
      worst_m3 = routed.volume_in.at(id) - handed, worst = id;
  }
  // 0.01 percentage points: run_info writes the figure to 4 significant digits.
  EXPECT_NEAR(routed.event_volume_error_pct, expected_pct, 0.01)
      << "inflow file " << in.volume_m3() << " m3, outlets " << outlets << " m3, storage change " << storage
      << " m3; largest hand-over mismatch " << worst_m3 << " m3 into " << worst;
  // Above 0.1 % of the event the run warns (docs/methods.md, "Volume balance").
  EXPECT_GT(std::abs(expected_pct), 0.1);
  EXPECT_NE(r.err.find("hand-over between reaches"), std::string::npos) << r.err;
}

// 4. The same lines in EPSG:4326 (every vertex and the run file's point
// transformed by OGR/PROJ): same reaches, links, and lengths.
TEST_F(PlainLines, TheSameLinesInLatLonGiveTheSameNetwork) {
  const Crs geo(4326);
  const std::string layer_utm = writeLayer(sc_, dir_ / "utm.gpkg", utm_);
  const std::string layer_geo = writeLayer(sc_, dir_ / "geo.gpkg", geo);
  // A base flow along every line, so that every reach carries water and
  // routing reports its grid (dx_m, subreaches) everywhere.
  const std::string run_utm = writeRunFile(sc_, dir_ / "utm.toml", utm_, {true, false, true});
  const std::string run_geo = writeRunFile(sc_, dir_ / "geo.toml", geo, {true, false, true});
  const std::string prob_utm = (dir_ / "utm_problems.gpkg").string(), prob_geo = (dir_ / "geo_problems.gpkg").string();
  const auto cu = testsupport::runReachwise(fmt::format("check {} --config {} --problems {}", layer_utm, run_utm, prob_utm));
  const auto cg = testsupport::runReachwise(fmt::format("check {} --config {} --problems {}", layer_geo, run_geo, prob_geo));
  ASSERT_EQ(cu.code, 0) << cu.err;
  ASSERT_EQ(cg.code, 0) << cg.err;
  const Built bu = readNetworkLayer(prob_utm), bg = readNetworkLayer(prob_geo);
  EXPECT_EQ(bg.down, bu.down);
  EXPECT_EQ(bg.flipped, bu.flipped);
  for (const auto& [id, t] : truth_) EXPECT_EQ(bg.down.count(id) ? bg.down.at(id) : std::set<std::string>{"?"}, t.down) << id;

  writeInflow(dir_ / "inflow.csv", sc_.top);
  const std::string out_utm = (dir_ / "utm_out.gpkg").string(), out_geo = (dir_ / "geo_out.gpkg").string();
  fs::remove(out_utm);
  fs::remove(out_geo);
  const std::string inflow = (dir_ / "inflow.csv").string();
  const auto ru = testsupport::runReachwise(
      fmt::format("route {} --config {} --inflow {} --out {} --hydrographs none", layer_utm, run_utm, inflow, out_utm));
  const auto rg = testsupport::runReachwise(
      fmt::format("route {} --config {} --inflow {} --out {} --hydrographs none", layer_geo, run_geo, inflow, out_geo));
  ASSERT_EQ(ru.code, 0) << ru.err;
  ASSERT_EQ(rg.code, 0) << rg.err;
  const Routed u = readRouted(out_utm), g = readRouted(out_geo);
  ASSERT_EQ(u.length_m.size(), truth_.size());
  ASSERT_EQ(g.length_m.size(), truth_.size());
  // Planar UTM lengths within about 20 km of the central meridian (15 E)
  // are 0.9996 (the scale factor) of the ellipsoidal ones, up to 1.00001
  // at 20 km (common practice for transverse Mercator); the acceptance
  // bound is 0.3 %.
  for (const auto& [id, len] : u.length_m) {
    ASSERT_TRUE(g.length_m.count(id)) << id;
    EXPECT_NEAR(g.length_m.at(id) / len, 1.0, 0.003) << id;
    // And the projected piece is its true course, up to ends moved by snapping.
    ASSERT_TRUE(truth_.count(id)) << id;
    EXPECT_NEAR(len, length(truth_.at(id).course), 5.0) << id;
  }
}

// The other way to handle the lake: both shores listed in `unconnected`.
// The stem above the lake then ends there (a basin of its own) and the stem
// below starts there as a headwater; without the list both shores are gaps.
TEST(PlainLinesLake, UnconnectedShoresAreNoGaps) {
  const auto dir = testsupport::testScratchDir();
  fixtures::Layer layer;
  layer.fields = {{"reach_id", OFTString}, {"slope", OFTReal}, {"manning_n", OFTReal},
                  {"bottom_width", OFTReal}, {"side_slope", OFTReal}};
  auto feature = [](const Polyline& l, const std::string& id) {
    return fixtures::Feature{wkt(l, Crs(32633)), {id, "0.001", "0.035", "20", "2"}};
  };
  const double x = 500000, y = 5530000;
  // above: 3 km down to the upper shore; below: from the lower shore, 400 m
  // on, 3 km down to the sea; side: a tributary ending on below's interior.
  layer.features = {feature({{x, y}, {x + 100, y - 3000}}, "above"),
                    feature({{x + 100, y - 3000 - kLakeM}, {x, y - 6400}}, "below"),
                    feature({{x + 2500, y - 3500}, {x + 60, y - 4700}}, "side")};
  const std::string in = (dir / "lake.gpkg").string();
  fs::remove(in);
  fixtures::write(in, "GPKG", {layer});
  auto runFile = [&](const std::string& name, const std::string& extra) {
    std::ofstream f(dir / name);
    f << "[network]\norientation = \"outlets\"\noutlets = [\"below\"]\ngap_search_m = 500\n" << extra;
    return (dir / name).string();
  };
  const std::string problems = (dir / "lake_problems.gpkg").string();
  const auto ok = testsupport::runReachwise(fmt::format(
      "check {} --config {} --problems {}", in, runFile("lake.toml", "unconnected = [\"above\", \"below\"]\n"),
      problems));
  EXPECT_EQ(ok.code, 0) << ok.err;
  const auto ps = problemLines(ok.err);
  EXPECT_TRUE(linesWith(ps, "probable_gap").empty());
  EXPECT_TRUE(linesWith(ps, "unresolved_gap").empty());
  EXPECT_EQ(summaryValue(ok.out, "basins"), "2");
  const Built b = readNetworkLayer(problems);
  EXPECT_EQ(b.down.at("above"), std::set<std::string>{});  // ends at the lake
  EXPECT_EQ(b.down.at("side"), std::set<std::string>{"below.2"});
  EXPECT_EQ(b.down.at("below.1"), std::set<std::string>{"below.2"});
  for (const auto& [id, down] : b.down) EXPECT_FALSE(down.count("below.1")) << id;  // a headwater

  const auto gap = testsupport::runReachwise(fmt::format("check {} --config {}", in, runFile("lake_gap.toml", "")));
  EXPECT_EQ(gap.code, 1) << gap.err;
  EXPECT_EQ(linesWith(problemLines(gap.err), "probable_gap"), (std::set<std::string>{"above", "below"}));
}
