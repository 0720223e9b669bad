#include "reachwise/network/geos/GeometryTopology.hpp"

#include <GeographicLib/Ellipsoid.hpp>
#include <GeographicLib/Geodesic.hpp>
#include <fmt/core.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>
#include <queue>

#include "GeosHandle.hpp"
#include "reachwise/network/CutLines.hpp"
#include "reachwise/network/ReachProblem.hpp"

namespace reachwise::network::geos {

namespace {

bool usable(const ReachRecord& r) {
  if (r.line.size() < 2) return false;
  for (const auto& p : r.line)
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) return false;
  return true;
}

// ---------------------------------------------------------------- distances in metres

/// The nearest point of a line to a given point.
struct Nearest {
  double distance_m = std::numeric_limits<double>::infinity();
  double measure = 0;     ///< planar distance along the line in CRS units (where to cut)
  double from_start_m = 0;  ///< metres along the line from its first vertex
  double to_end_m = 0;      ///< metres along the line to its last vertex
};

/// Distances in metres between points and lines given in CRS coordinates.
/// Projected CRS: planar distance × metres per unit. Geographic CRS: the
/// coordinates around the point are scaled to metres with the ellipsoid's
/// radii of curvature at the point's latitude (GeographicLib::Ellipsoid:
/// metres per degree of latitude from the meridional radius, of longitude
/// from the radius of the parallel), so a tolerance is the same number of
/// metres in every direction. Within a few kilometres of the point this
/// differs from the geodesic distance by less than 0.01 %; end-to-end
/// distances are geodesics (GeographicLib::Geodesic).
class Metric {
public:
  explicit Metric(const CrsMetric& c)
      : c_(c), ellipsoid_(c.geographic ? c.a_m : 1.0, c.geographic ? c.f : 0.0),
        geodesic_(c.geographic ? c.a_m : 1.0, c.geographic ? c.f : 0.0) {}

  /// Metres per CRS unit along x and along y at p.
  std::pair<double, double> scale(const Point3& p) const {
    if (!c_.geographic) return {c_.metres_per_unit, c_.metres_per_unit};
    const double lat = std::clamp((c_.lat_first ? p.x : p.y) * c_.degrees_per_unit, -90.0, 90.0);
    const double per_deg = M_PI / 180.0 * c_.degrees_per_unit;
    const double k_lat = ellipsoid_.MeridionalCurvatureRadius(lat) * per_deg;
    // Near a pole a degree of longitude shrinks to nothing; bound the search box.
    const double k_lon = std::max(ellipsoid_.CircleRadius(lat) * per_deg, 1e-3 * k_lat);
    return c_.lat_first ? std::pair{k_lat, k_lon} : std::pair{k_lon, k_lat};
  }

  /// Half-width in CRS units of a box holding every point within d_m of p.
  double searchRadius(const Point3& p, double d_m) const {
    const auto [kx, ky] = scale(p);
    return d_m / std::min(kx, ky) * (c_.geographic ? 1.01 : 1.0);
  }

  double pointDistance(const Point3& p, const Point3& q) const {
    if (!c_.geographic) return std::hypot(p.x - q.x, p.y - q.y) * c_.metres_per_unit;
    auto lat = [this](const Point3& a) { return (c_.lat_first ? a.x : a.y) * c_.degrees_per_unit; };
    auto lon = [this](const Point3& a) { return (c_.lat_first ? a.y : a.x) * c_.degrees_per_unit; };
    double s12 = 0;
    geodesic_.Inverse(lat(p), lon(p), lat(q), lon(q), s12);
    return s12;
  }

  /// The point of `line` nearest to p (metres in the frame scaled at p).
  Nearest nearest(const std::vector<Point3>& line, const Point3& p) const {
    const auto [kx, ky] = scale(p);
    Nearest best;
    double measure = 0, along_m = 0;
    for (std::size_t i = 1; i < line.size(); ++i) {
      const double ax = (line[i - 1].x - p.x) * kx, ay = (line[i - 1].y - p.y) * ky;
      const double bx = (line[i].x - p.x) * kx, by = (line[i].y - p.y) * ky;
      const double dx = bx - ax, dy = by - ay;
      const double seg2 = dx * dx + dy * dy;
      const double t = seg2 > 0 ? std::clamp(-(ax * dx + ay * dy) / seg2, 0.0, 1.0) : 0.0;
      const double d = std::hypot(ax + t * dx, ay + t * dy);
      const double seg_m = std::sqrt(seg2);
      const double seg_units = std::hypot(line[i].x - line[i - 1].x, line[i].y - line[i - 1].y);
      if (d < best.distance_m) {
        best.distance_m = d;
        best.measure = measure + t * seg_units;
        best.from_start_m = along_m + t * seg_m;
      }
      measure += seg_units;
      along_m += seg_m;
    }
    // Far from p the scale is p's, but these are only compared with a
    // tolerance, which matters only near p.
    best.to_end_m = along_m - best.from_start_m;
    return best;
  }

  double lineLength(const std::vector<Point3>& line) const {
    double sum = 0;
    for (std::size_t i = 1; i < line.size(); ++i) sum += pointDistance(line[i - 1], line[i]);
    return sum;
  }

private:
  CrsMetric c_;
  GeographicLib::Ellipsoid ellipsoid_;
  GeographicLib::Geodesic geodesic_;
};

// ---------------------------------------------------------------- splitting

/// Cumulative planar distance along the vertices.
std::vector<double> measures(const std::vector<Point3>& line) {
  std::vector<double> m(line.size(), 0.0);
  for (std::size_t i = 1; i < line.size(); ++i)
    m[i] = m[i - 1] + std::hypot(line[i].x - line[i - 1].x, line[i].y - line[i - 1].y);
  return m;
}

Point3 interpolate(const Point3& a, const Point3& b, double t) {
  return {a.x + t * (b.x - a.x), a.y + t * (b.y - a.y), a.z + t * (b.z - a.z)};
}

/// Cuts a line at the given measures (sorted, strictly inside the line).
std::vector<std::vector<Point3>> cutLine(const std::vector<Point3>& line,
                                         const std::vector<double>& cuts) {
  const std::vector<double> m = measures(line);
  std::vector<std::vector<Point3>> pieces(1);
  pieces.back().push_back(line.front());
  std::size_t next = 0;
  for (std::size_t i = 1; i < line.size(); ++i) {
    while (next < cuts.size() && cuts[next] <= m[i]) {
      const double seg = m[i] - m[i - 1];
      const double t = seg > 0 ? (cuts[next] - m[i - 1]) / seg : 0.0;
      const Point3 at = interpolate(line[i - 1], line[i], t);
      if (at.x != pieces.back().back().x || at.y != pieces.back().back().y)
        pieces.back().push_back(at);
      pieces.emplace_back(1, at);
      ++next;
    }
    if (line[i].x != pieces.back().back().x || line[i].y != pieces.back().back().y)
      pieces.back().push_back(line[i]);
  }
  // A cut that fell on the last vertex would leave a one-point tail.
  pieces.erase(std::remove_if(pieces.begin(), pieces.end(),
                              [](const auto& p) { return p.size() < 2; }),
               pieces.end());
  return pieces;
}

struct Cut {
  double measure;  ///< CRS units along the line
  double along_m;  ///< metres along the line
};

/// Another line's end touching a line's interior.
struct Touch {
  std::string by;  ///< the line whose end it is
  Point3 at;       ///< the end
  double measure;  ///< CRS units along the touched line
};

/// Where one line is cut: the cuts (sorted, one per junction) and the ends
/// that made them.
struct LineCuts {
  std::vector<double> measures;
  std::vector<Touch> touches;
};

/// For every line, where other lines' ends touch its interior.
std::vector<LineCuts> findCuts(const GeosContext& ctx, const ReachTable& table,
                               const Metric& metric, double tol_m) {
  const auto& rs = table.reaches;
  IndexTree tree(ctx);
  for (std::size_t i = 0; i < rs.size(); ++i)
    if (usable(rs[i])) tree.insert(makeLine(ctx, rs[i].line), i);
  std::vector<std::vector<Cut>> cuts(rs.size());
  std::vector<LineCuts> out(rs.size());
  for (std::size_t i = 0; i < rs.size(); ++i) {
    if (!usable(rs[i])) continue;
    for (const Point3* end : {&rs[i].line.front(), &rs[i].line.back()}) {
      for (std::size_t j : tree.query(end->x, end->y, metric.searchRadius(*end, tol_m))) {
        if (j == i) continue;
        const Nearest n = metric.nearest(rs[j].line, *end);
        if (n.distance_m > tol_m) continue;
        // Near an end of line j: snapping handles it.
        if (!(n.from_start_m > tol_m && n.to_end_m > tol_m)) continue;
        cuts[j].push_back({n.measure, n.from_start_m});
        out[j].touches.push_back({rs[i].id, *end, n.measure});
      }
    }
  }
  for (std::size_t j = 0; j < rs.size(); ++j) {
    auto& c = cuts[j];
    std::sort(c.begin(), c.end(), [](const Cut& a, const Cut& b) { return a.measure < b.measure; });
    // Ends of several lines at one junction give one cut.
    c.erase(std::unique(c.begin(), c.end(),
                        [tol_m](const Cut& a, const Cut& b) { return b.along_m - a.along_m <= tol_m; }),
            c.end());
    for (const Cut& k : c) out[j].measures.push_back(k.measure);
  }
  return out;
}

/// A line replaced by its pieces, until they are numbered (numberPieces).
struct CutLine {
  std::size_t first = 0;    ///< record of the first piece in digitising order; the others follow
  std::size_t count = 0;
  bool reoriented = false;  ///< the line's own `reoriented` (before orientation)
  std::vector<Touch> touches;
  std::vector<std::size_t> before;  ///< per touch: digitised index of the piece before its cut
};

/// Replaces each cut line by its pieces, numbered `<id>.1`, `<id>.2`, ...
/// in digitising order for now (numberPieces renumbers them with the flow).
std::vector<CutLine> splitLines(const GeosContext& ctx, ReachTable& table, const Metric& metric,
                                const TopologyOptions& opt, double tol_m) {
  auto cuts = findCuts(ctx, table, metric, tol_m);
  std::vector<ReachRecord> out;
  std::vector<CutLine> cut_lines;
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    ReachRecord& r = table.reaches[i];
    if (cuts[i].measures.empty()) {
      out.push_back(std::move(r));
      continue;
    }
    const auto pieces = cutLine(r.line, cuts[i].measures);
    if (pieces.size() < 2) {  // cuts lie inside the line, so this is only a guard
      out.push_back(std::move(r));
      continue;
    }
    // Each piece is measured on itself (geodesic on a geographic CRS); a
    // length given in the layer, and the base flow entering along the
    // line, are shared in proportion.
    std::vector<double> piece_m;
    double total = 0;
    for (const auto& p : pieces) {
      piece_m.push_back(opt.line_length_m ? opt.line_length_m(p) : metric.lineLength(p));
      total += piece_m.back();
    }
    CutLine cut{out.size(), pieces.size(), r.reoriented, std::move(cuts[i].touches), {}};
    for (const Touch& t : cut.touches) {
      const auto& m = cuts[i].measures;
      const auto after = static_cast<std::size_t>(std::upper_bound(m.begin(), m.end(), t.measure) - m.begin());
      cut.before.push_back(std::clamp<std::size_t>(after, 1, pieces.size() - 1) - 1);
    }
    for (std::size_t k = 0; k < pieces.size(); ++k) {
      ReachRecord piece = r;
      piece.id = r.id + "." + std::to_string(k + 1);
      piece.line_id = r.id;
      piece.piece = static_cast<std::uint32_t>(k + 1);
      piece.line = pieces[k];
      const double share = total > 0 ? piece_m[k] / total : 0.0;
      piece.length_m = r.length_m == r.geometry_length_m ? piece_m[k] : r.length_m * share;
      piece.geometry_length_m = piece_m[k];
      piece.base_flow_m3s = r.base_flow_m3s * share;
      out.push_back(std::move(piece));
    }
    cut_lines.push_back(std::move(cut));
  }
  table.reaches = std::move(out);
  return cut_lines;
}

// ---------------------------------------------------------------- connections

/// The point at planar distance `measure` (CRS units) along `line`.
Point3 pointAt(const std::vector<Point3>& line, double measure) {
  const std::vector<double> m = measures(line);
  for (std::size_t i = 1; i < line.size(); ++i) {
    if (measure > m[i] && i + 1 < line.size()) continue;
    const double seg = m[i] - m[i - 1];
    return interpolate(line[i - 1], line[i], seg > 0 ? std::clamp((measure - m[i - 1]) / seg, 0.0, 1.0) : 0.0);
  }
  return line.back();
}

std::size_t recordOf(const ReachTable& table, const std::string& id, const char* key) {
  for (std::size_t i = 0; i < table.reaches.size(); ++i)
    if (table.reaches[i].id == id) {
      if (!usable(table.reaches[i]))
        throw InvalidParameter(key, "reach " + id + " has no usable line");
      return i;
    }
  throw InvalidParameter(key, "reach " + id + " is not in the layer");
}

/// An overshoot: `line`, walked from its first vertex, crosses `target`
/// within the first half of its length. Returns the line cut at that
/// crossing (the crossing first) and the planar length cut off, or nullopt.
std::optional<std::pair<std::vector<Point3>, double>> trimAtCrossing(
    const std::vector<Point3>& line, const std::vector<Point3>& target) {
  const std::vector<double> m = measures(line);
  for (std::size_t k = 1; k < line.size() && m[k - 1] <= 0.5 * m.back(); ++k) {
    const Point3 &a = line[k - 1], &b = line[k];
    double best_t = 2;
    for (std::size_t q = 1; q < target.size(); ++q) {
      const Point3 &c = target[q - 1], &d = target[q];
      const double den = (b.x - a.x) * (d.y - c.y) - (b.y - a.y) * (d.x - c.x);
      if (den == 0) continue;  // parallel
      const double t = ((c.x - a.x) * (d.y - c.y) - (c.y - a.y) * (d.x - c.x)) / den;
      const double u = ((c.x - a.x) * (b.y - a.y) - (c.y - a.y) * (b.x - a.x)) / den;
      if (t >= 0 && t <= 1 && u >= 0 && u <= 1) best_t = std::min(best_t, t);
    }
    if (best_t > 1) continue;
    const double cut = m[k - 1] + best_t * (m[k] - m[k - 1]);
    if (cut > 0.5 * m.back()) return std::nullopt;
    std::vector<Point3> kept{interpolate(a, b, best_t)};
    kept.front().z = line.front().z;  // the end keeps its own Z
    kept.insert(kept.end(), line.begin() + static_cast<std::ptrdiff_t>(k), line.end());
    return std::pair{std::move(kept), cut};
  }
  return std::nullopt;
}

/// Joins the end of each connection's `from` line nearest to its target:
/// a line that crosses the target line near that end (an overshoot) is
/// cut back to the crossing; otherwise the end is extended by a straight
/// segment to the target (the nearest point of the target line, or the
/// given point). Cutting and snapping then join it there.
void addConnections(ReachTable& table, const Metric& metric, const TopologyOptions& opt,
                    ProblemList& problems) {
  for (const Connection& c : opt.connections) {
    const std::size_t i = recordOf(table, c.from, "connect.from");
    ReachRecord& r = table.reaches[i];
    Point3 targets[2];
    double dist[2];
    for (int end = 0; end < 2; ++end) {
      const Point3& p = end == 0 ? r.line.front() : r.line.back();
      if (c.to_point) {
        targets[end] = *c.to_point;
        dist[end] = metric.pointDistance(p, *c.to_point);
      } else {
        const std::size_t j = recordOf(table, c.to_reach, "connect.to");
        if (j == i) throw InvalidParameter("connect.to", "reach " + c.from + " cannot be joined to itself");
        const Nearest n = metric.nearest(table.reaches[j].line, p);
        targets[end] = pointAt(table.reaches[j].line, n.measure);
        dist[end] = n.distance_m;
      }
    }
    const std::string target_name = c.to_point ? fmt::format("point ({:g}, {:g})", c.to_point->x, c.to_point->y)
                             : c.to_reach;
    const int end = dist[1] <= dist[0] ? 1 : 0;
    const double before_m = r.geometry_length_m;
    // Walk the line from the chosen end.
    if (end == 1) std::reverse(r.line.begin(), r.line.end());
    std::optional<std::pair<std::vector<Point3>, double>> trimmed;
    if (!c.to_point) trimmed = trimAtCrossing(r.line, table.reaches[recordOf(table, c.to_reach, "connect.to")].line);
    std::string how;
    if (trimmed) {
      r.line = std::move(trimmed->first);
      how = "cut back to where it crosses";
    } else {
      Point3 at = targets[end];
      at.z = r.line.front().z;  // the end keeps its own Z
      if (dist[end] > 0) r.line.insert(r.line.begin(), at);
      how = "extended to";
    }
    if (end == 1) std::reverse(r.line.begin(), r.line.end());
    const bool length_from_geometry = r.length_m == r.geometry_length_m;
    r.geometry_length_m = opt.line_length_m ? opt.line_length_m(r.line) : metric.lineLength(r.line);
    if (length_from_geometry) r.length_m = r.geometry_length_m;
    const Point3& at = end == 0 ? r.line.front() : r.line.back();
    problems.push_back(reachProblem(
        ProblemCode::AddedConnection, r, at.x, at.y,
        fmt::format("the {} end of {} is {} {} (the line is {:.3g} m {}; network.connect)",
                    end == 0 ? "first" : "last", r.id, how, target_name,
                    std::abs(r.geometry_length_m - before_m),
                    r.geometry_length_m < before_m ? "shorter" : "longer")));
  }
}

// ---------------------------------------------------------------- snapping

struct UnionFind {
  std::vector<std::size_t> parent;
  explicit UnionFind(std::size_t n) : parent(n) { std::iota(parent.begin(), parent.end(), 0); }
  std::size_t find(std::size_t a) {
    while (parent[a] != a) a = parent[a] = parent[parent[a]];
    return a;
  }
  void unite(std::size_t a, std::size_t b) {
    a = find(a);
    b = find(b);
    if (a != b) parent[std::max(a, b)] = std::min(a, b);  // lowest index is the representative
  }
};

struct Graph {
  std::vector<std::size_t> from, to;  ///< node per record (npos when not in the topology)
  std::vector<Point3> node;           ///< node positions
  std::vector<std::size_t> degree;    ///< line ends per node
  std::size_t moved_ends = 0;         ///< ends moved onto a node another end shares
  double largest_move_m = 0;          ///< the farthest of those moves
};
constexpr std::size_t npos = static_cast<std::size_t>(-1);

/// End point 2i is the first vertex of record i, 2i+1 its last.
Point3& endPoint(ReachTable& t, std::size_t e) {
  auto& line = t.reaches[e / 2].line;
  return e % 2 == 0 ? line.front() : line.back();
}

Graph snapEnds(const GeosContext& ctx, ReachTable& table, const Metric& metric, double tol_m) {
  const std::size_t n = table.reaches.size();
  IndexTree tree(ctx);
  for (std::size_t e = 0; e < 2 * n; ++e)
    if (usable(table.reaches[e / 2]))
      tree.insert(makePoint(ctx, endPoint(table, e).x, endPoint(table, e).y), e);
  UnionFind uf(2 * n);
  for (std::size_t e = 0; e < 2 * n; ++e) {
    if (!usable(table.reaches[e / 2])) continue;
    const Point3 p = endPoint(table, e);
    for (std::size_t f : tree.query(p.x, p.y, metric.searchRadius(p, tol_m))) {
      if (uf.find(e) == uf.find(f)) continue;
      if (metric.pointDistance(p, endPoint(table, f)) <= tol_m) uf.unite(e, f);
    }
  }
  Graph g;
  g.from.assign(n, npos);
  g.to.assign(n, npos);
  std::map<std::size_t, std::size_t> node_of_root;
  for (std::size_t e = 0; e < 2 * n; ++e) {
    if (!usable(table.reaches[e / 2])) continue;
    const std::size_t root = uf.find(e);
    auto [it, fresh] = node_of_root.try_emplace(root, g.node.size());
    if (fresh) {
      g.node.push_back(endPoint(table, root));
      g.degree.push_back(0);
    }
    ++g.degree[it->second];
    (e % 2 == 0 ? g.from : g.to)[e / 2] = it->second;
    Point3& p = endPoint(table, e);  // move the end onto its node, keeping its own Z
    const Point3& node = g.node[it->second];
    if (p.x != node.x || p.y != node.y) {
      ++g.moved_ends;
      g.largest_move_m = std::max(g.largest_move_m, metric.pointDistance(p, node));
    }
    p.x = node.x;
    p.y = node.y;
  }
  return g;
}

// ---------------------------------------------------------------- orientation

void flip(ReachRecord& r, Graph& g, std::size_t i, ProblemList& problems, const std::string& why) {
  std::reverse(r.line.begin(), r.line.end());
  r.reoriented = !r.reoriented;
  std::swap(g.from[i], g.to[i]);
  std::swap(r.up_elevation_m, r.down_elevation_m);
  problems.push_back(reachProblem(ProblemCode::FlippedLine, r, r.line.front().x,
                                 r.line.front().y,
                                 fmt::format("line {} reversed: {}", r.id, why)));
}

bool hasEndZ(const ReachRecord& r) {
  return std::isfinite(r.line.front().z) && std::isfinite(r.line.back().z);
}

Orientation resolveAuto(const ReachTable& table, const Graph& g) {
  bool any_slope = false;
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    if (g.from[i] == npos) continue;
    const auto& r = table.reaches[i];
    if (!hasEndZ(r)) return Orientation::Digitised;
    if (r.line.front().z != r.line.back().z) any_slope = true;
  }
  return any_slope ? Orientation::Elevation : Orientation::Digitised;
}

std::size_t orientByElevation(ReachTable& table, Graph& g, ProblemList& problems) {
  std::size_t flips = 0;
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    auto& r = table.reaches[i];
    if (g.from[i] == npos || !hasEndZ(r) || !(r.line.front().z < r.line.back().z)) continue;
    flip(r, g, i, problems, "its first vertex is lower than its last");
    ++flips;
  }
  return flips;
}

/// Undirected incidence: for each node, the records touching it.
std::vector<std::vector<std::size_t>> incidence(const Graph& g) {
  std::vector<std::vector<std::size_t>> inc(g.node.size());
  for (std::size_t i = 0; i < g.from.size(); ++i) {
    if (g.from[i] == npos || g.from[i] == g.to[i]) continue;
    inc[g.from[i]].push_back(i);
    inc[g.to[i]].push_back(i);
  }
  return inc;
}

std::size_t other(const Graph& g, std::size_t rec, std::size_t node) {
  return g.from[rec] == node ? g.to[rec] : g.from[rec];
}

/// Breadth-first search over one connected part. The arrays span all
/// nodes and are reused from part to part (only the visited entries are
/// reset), so a layer of many small parts stays linear in time.
struct Bfs {
  std::vector<std::size_t> order, parent_rec, depth, cost;
  explicit Bfs(std::size_t nodes) : parent_rec(nodes, npos), depth(nodes, npos), cost(nodes, 0) {}

  void run(const Graph& g, const std::vector<std::vector<std::size_t>>& inc, std::size_t root) {
    for (std::size_t u : order) parent_rec[u] = depth[u] = npos;
    order.clear();
    depth[root] = 0;
    std::queue<std::size_t> q;
    q.push(root);
    while (!q.empty()) {
      const std::size_t u = q.front();
      q.pop();
      order.push_back(u);
      for (std::size_t rec : inc[u]) {
        const std::size_t v = other(g, rec, u);
        if (depth[v] != npos) continue;
        depth[v] = depth[u] + 1;
        parent_rec[v] = rec;
        q.push(v);
      }
    }
  }

  /// cost[u] = lines to reverse for flow towards node u, over the spanning
  /// tree of the last run (moving the outlet across one edge changes only
  /// that edge's direction).
  void flipCounts(const Graph& g) {
    const std::size_t root = order.front();
    cost[root] = 0;
    for (std::size_t k = 1; k < order.size(); ++k) {
      const std::size_t v = order[k];
      if (g.from[parent_rec[v]] != v) ++cost[root];  // must flow v -> parent
    }
    for (std::size_t k = 1; k < order.size(); ++k) {
      const std::size_t v = order[k];
      const std::size_t rec = parent_rec[v];
      const std::size_t p = other(g, rec, v);
      const bool need_up = g.from[rec] != v;    // towards the old side
      const bool need_down = g.from[rec] != p;  // towards v
      cost[v] = cost[p] - (need_up ? 1 : 0) + (need_down ? 1 : 0);
    }
  }
};

/// The record is one of `ids` or a piece of a line cut from one (used for
/// the outlets and the unconnected reaches).
bool matchesOutlet(const ReachRecord& r, const std::vector<std::string>& ids) {
  return std::any_of(ids.begin(), ids.end(),
                     [&](const std::string& o) { return r.id == o || r.line_id == o; });
}

/// The outlet node of each named outlet: the first free end (a node no
/// other line touches) that is a digitised downstream end of a reach
/// carrying the name, else the first free digitised upstream end. Names
/// that are no reach (`unknown_outlet`) or have no free end
/// (`outlet_not_at_end`) are errors.
std::vector<bool> namedOutletNodes(const ReachTable& table, const Graph& g,
                                   const std::vector<std::vector<std::size_t>>& inc,
                                   const TopologyOptions& opt, ProblemList& problems) {
  std::vector<bool> outlet(g.node.size(), false);
  const CutLines cut = CutLines::of(table);
  for (const auto& o : opt.outlets) {
    std::size_t at_down = npos, at_up = npos;
    const ReachRecord* named = nullptr;
    for (std::size_t i = 0; i < table.reaches.size(); ++i) {
      if (!matchesOutlet(table.reaches[i], {o})) continue;
      if (!named) named = &table.reaches[i];
      if (g.from[i] == npos || g.from[i] == g.to[i]) continue;
      if (at_down == npos && inc[g.to[i]].size() == 1) at_down = g.to[i];
      if (at_up == npos && inc[g.from[i]].size() == 1) at_up = g.from[i];
    }
    if (at_down != npos || at_up != npos) {
      outlet[at_down != npos ? at_down : at_up] = true;
    } else if (named) {
      problems.push_back(reachProblem(
          ProblemCode::OutletNotAtEnd, *named,
          fmt::format("outlet {} named in the config has no free end: other lines meet both its "
                      "ends, so no flow can leave the network there",
                      o)));
    } else {
      const std::string line = cut.lineOf(o);
      Problem p(ProblemCode::UnknownOutlet,
                fmt::format("outlet {} named in the config is not a reach of the layer{}", o,
                            line.empty() ? "" : fmt::format(" ({}; name {})", cut.hint(o), line)));
      p.reach_id = o;
      problems.push_back(std::move(p));
    }
  }
  return outlet;
}

/// The outlet node of a connected part without a named outlet (reached by `b`).
std::size_t chooseOutlet(const ReachTable& table, const Graph& g,
                         const std::vector<std::vector<std::size_t>>& inc, Bfs& b) {
  std::vector<std::size_t> leaves;
  for (std::size_t u : b.order)
    if (inc[u].size() == 1) leaves.push_back(u);
  if (leaves.empty()) return b.order.front();  // a ring: keep digitising order
  b.flipCounts(g);
  const auto& cost = b.cost;
  auto is_down = [&](std::size_t u) { return g.to[inc[u].front()] == u; };
  // Channel size breaks a tie: the outlet reach is usually the widest.
  auto size = [&](std::size_t u) {
    const auto& sec = table.reaches[inc[u].front()].section;
    const double w = std::isfinite(sec.bottom_width_m) ? sec.bottom_width_m : sec.diameter_m;
    return std::isfinite(w) ? w : 0.0;
  };
  return *std::min_element(leaves.begin(), leaves.end(), [&](std::size_t a, std::size_t c) {
    if (cost[a] != cost[c]) return cost[a] < cost[c];
    if (size(a) != size(c)) return size(a) > size(c);
    if (is_down(a) != is_down(c)) return is_down(a);
    return a < c;
  });
}

/// +1 when the line's digitised direction runs downhill, -1 uphill, 0 when
/// neither Z at both ends nor both elevation fields tell.
int elevationSign(const ReachRecord& r, std::string& why) {
  const double z0 = r.line.front().z, z1 = r.line.back().z;
  if (std::isfinite(z0) && std::isfinite(z1) && z0 != z1) {
    why = fmt::format("its first vertex is lower than its last (Z {:g} < {:g})", z0, z1);
    return z0 > z1 ? 1 : -1;
  }
  const double up = r.up_elevation_m, down = r.down_elevation_m;
  if (std::isfinite(up) && std::isfinite(down) && up != down) {
    why = fmt::format("its up_elevation is lower than its down_elevation ({:g} < {:g} m)", up, down);
    return up > down ? 1 : -1;
  }
  return 0;
}

/// Distance along the network (metres) from every node to its nearest
/// outlet node, and that outlet (multi-source Dijkstra).
struct Potential {
  std::vector<double> dist;
  std::vector<std::size_t> outlet;
};

Potential distancesToOutlets(const Graph& g, const std::vector<std::vector<std::size_t>>& inc,
                             const std::vector<bool>& is_outlet, const std::vector<double>& len) {
  Potential p{std::vector<double>(g.node.size(), std::numeric_limits<double>::infinity()),
              std::vector<std::size_t>(g.node.size(), npos)};
  using Item = std::pair<double, std::size_t>;
  std::priority_queue<Item, std::vector<Item>, std::greater<>> q;
  for (std::size_t u = 0; u < g.node.size(); ++u)
    if (is_outlet[u]) {
      p.dist[u] = 0;
      p.outlet[u] = u;
      q.push({0.0, u});
    }
  while (!q.empty()) {
    const auto [d, u] = q.top();
    q.pop();
    if (d > p.dist[u]) continue;
    for (std::size_t rec : inc[u]) {
      const std::size_t v = other(g, rec, u);
      const double dv = d + len[rec];
      if (dv < p.dist[v]) {
        p.dist[v] = dv;
        p.outlet[v] = p.outlet[u];
        q.push({dv, v});
      }
    }
  }
  return p;
}

/// Orientation::Outlets (see TopologyOptions::outlets).
std::size_t orientToOutlets(ReachTable& table, Graph& g, const Metric& metric,
                            const TopologyOptions& opt, ProblemList& problems) {
  const auto inc = incidence(g);
  std::vector<bool> is_outlet = namedOutletNodes(table, g, inc, opt, problems);
  // A part without a named outlet gets one.
  std::vector<bool> seen(g.node.size(), false);
  Bfs b(g.node.size());
  for (std::size_t start = 0; start < g.node.size(); ++start) {
    if (seen[start] || inc[start].empty()) continue;
    b.run(g, inc, start);
    bool named = false;
    for (std::size_t u : b.order) {
      seen[u] = true;
      named = named || is_outlet[u];
    }
    if (!named) is_outlet[chooseOutlet(table, g, inc, b)] = true;
  }
  const std::size_t n = table.reaches.size();
  std::vector<double> len(n, 0.0);
  for (std::size_t i = 0; i < n; ++i)
    if (g.from[i] != npos) len[i] = metric.lineLength(table.reaches[i].line);
  const Potential pot = distancesToOutlets(g, inc, is_outlet, len);

  // Each line flows from its end farther from an outlet (ties: digitised),
  // unless elevations say otherwise.
  std::vector<std::size_t> up(n, npos);
  std::vector<std::string> elevation_why(n);
  std::vector<std::vector<std::size_t>> out(g.node.size());
  for (std::size_t i = 0; i < n; ++i) {
    if (g.from[i] == npos || g.from[i] == g.to[i]) continue;
    const std::size_t a = g.from[i], c = g.to[i];
    const int sign = elevationSign(table.reaches[i], elevation_why[i]);
    up[i] = sign > 0 ? a : sign < 0 ? c : pot.dist[c] > pot.dist[a] ? c : a;
    out[up[i]].push_back(i);
  }
  // A line that would be reversed keeps its digitised direction a -> c when
  // both its ends still drain without it: c has another way out, a is no
  // outlet, and c does not lead back to a (no loop).
  std::vector<std::size_t> stamp(g.node.size(), npos);
  auto reaches = [&](std::size_t from, std::size_t target, std::size_t skip) {
    std::vector<std::size_t> stack{from};
    stamp[from] = skip;
    while (!stack.empty()) {
      const std::size_t u = stack.back();
      stack.pop_back();
      if (u == target) return true;
      for (std::size_t rec : out[u]) {
        const std::size_t v = other(g, rec, u);
        if (rec == skip || stamp[v] == skip) continue;
        stamp[v] = skip;
        stack.push_back(v);
      }
    }
    return false;
  };
  for (std::size_t i = 0; i < n; ++i) {
    if (up[i] == npos || up[i] == g.from[i] || !elevation_why[i].empty()) continue;
    const std::size_t a = g.from[i], c = g.to[i];
    if (is_outlet[a] || out[c].size() < 2 || reaches(c, a, i)) continue;
    out[c].erase(std::find(out[c].begin(), out[c].end(), i));
    out[a].push_back(i);
    up[i] = a;
  }
  std::size_t flips = 0;
  for (std::size_t i = 0; i < n; ++i) {
    if (up[i] == npos || up[i] == g.from[i]) continue;
    const std::size_t down = g.from[i];
    const std::string why =
        !elevation_why[i].empty()
            ? elevation_why[i]
            : fmt::format("it flows towards outlet {} ({:.0f} m along the network)",
                          table.reaches[inc[pot.outlet[down]].front()].id,
                          pot.dist[down] + len[i]);
    flip(table.reaches[i], g, i, problems, why);
    ++flips;
  }
  return flips;
}

// ---------------------------------------------------------------- numbering the pieces

bool idChar(char c) {
  return std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.';
}

/// Replaces, in one pass, each whole occurrence of an old id by its new id
/// (not inside a longer id: "7.1" is not replaced in "17.1" or "7.10").
std::string replaceIds(const std::string& text,
                       const std::vector<std::pair<std::string, std::string>>& ids) {
  std::string out;
  for (std::size_t i = 0; i < text.size();) {
    const std::pair<std::string, std::string>* hit = nullptr;
    if (i == 0 || !idChar(text[i - 1])) {
      for (const auto& entry : ids) {
        const std::size_t j = i + entry.first.size();
        if (text.compare(i, entry.first.size(), entry.first) != 0) continue;
        // The id ends here unless an id character (a '.' only before more of the id) follows.
        const bool more = j < text.size() && idChar(text[j]) &&
                          (text[j] != '.' || (j + 1 < text.size() && idChar(text[j + 1])));
        if (!more) {
          hit = &entry;
          break;
        }
      }
    }
    if (hit) {
      out += hit->second;
      i += hit->first.size();
    } else {
      out += text[i++];
    }
  }
  return out;
}

/// Numbers the pieces of each cut line from where the flow enters it:
/// `<id>.1` is the top piece whatever the digitising direction. Pieces
/// that orientation left pointing different ways keep digitising order
/// (noted in the line's `split_line` problems). Records are renamed, and so
/// are the problems reported about them since `renamed_from` (orientation
/// reports pieces by their ids in digitising order); then every cut is
/// reported (`split_line`) with the final ids of the pieces on either side.
void numberPieces(ReachTable& table, const std::vector<CutLine>& cut_lines,
                  std::size_t renamed_from, ProblemList& problems) {
  std::map<std::string, std::string> renamed;
  std::vector<Problem> cuts;
  for (const CutLine& c : cut_lines) {
    std::size_t flipped = 0;
    for (std::size_t k = 0; k < c.count; ++k) flipped += table.reaches[c.first + k].reoriented != c.reoriented;
    const bool against = flipped == c.count;  // the flow runs against the digitising
    const bool mixed = flipped != 0 && !against;
    auto number = [&](std::size_t k) { return against ? c.count - k : k + 1; };
    const ReachRecord& first = table.reaches[c.first];
    const std::string line = first.line_id;
    auto pieceId = [&](std::size_t k) { return line + "." + std::to_string(number(k)); };
    for (std::size_t k = 0; k < c.count; ++k) {
      ReachRecord& r = table.reaches[c.first + k];
      if (against) renamed.emplace(r.id, pieceId(k));
      r.id = pieceId(k);
      r.piece = static_cast<std::uint32_t>(number(k));
    }
    for (std::size_t t = 0; t < c.touches.size(); ++t) {
      const std::size_t k = c.before[t];
      const std::size_t up = std::min(number(k), number(k + 1)), down = std::max(number(k), number(k + 1));
      Problem p(ProblemCode::SplitLine,
                fmt::format("line {} is cut between {}.{} and {}.{} where the end of {} meets it{}",
                            line, line, up, line, down, c.touches[t].by,
                            mixed ? "; its pieces do not all flow one way (as where a line crosses a "
                                    "divide), so they are numbered in digitising order"
                                  : ""));
      p.fid = first.fid;
      p.reach_id = line;
      p.x = c.touches[t].at.x;
      p.y = c.touches[t].at.y;
      cuts.push_back(std::move(p));
    }
  }
  for (std::size_t i = renamed_from; i < problems.size() && !renamed.empty(); ++i) {
    Problem& p = problems[i];
    std::vector<std::pair<std::string, std::string>> ids;
    for (std::string* id : {&p.reach_id, &p.other_reach_id}) {
      const auto it = renamed.find(*id);
      if (it == renamed.end()) continue;
      ids.emplace_back(it->first, it->second);
      *id = it->second;
    }
    if (!ids.empty()) p.message = replaceIds(p.message, ids);
  }
  for (auto& p : cuts) problems.push_back(std::move(p));
}

// ---------------------------------------------------------------- links and gaps

void linkDownstream(ReachTable& table, const Graph& g, ProblemList& problems) {
  std::vector<std::vector<std::size_t>> leaving(g.node.size());
  for (std::size_t i = 0; i < table.reaches.size(); ++i)
    if (g.from[i] != npos && g.from[i] != g.to[i]) leaving[g.from[i]].push_back(i);
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    auto& r = table.reaches[i];
    r.to_reach.reset();
    if (g.from[i] == npos) continue;
    if (g.from[i] == g.to[i]) {
      problems.push_back(reachProblem(ProblemCode::ClosedLine, r, r.line.front().x,
                                     r.line.front().y,
                                     fmt::format("both ends of line {} meet at one node", r.id)));
      continue;
    }
    auto down = leaving[g.to[i]];
    if (down.empty()) continue;
    std::sort(down.begin(), down.end(), [&](std::size_t a, std::size_t b) {
      return table.reaches[a].id < table.reaches[b].id;
    });
    // Several reaches leaving one node form a bifurcation: all are named,
    // separated by ';' (ReachGraph's convention); their split shares come
    // from the `split` field and are checked by the graph validation.
    std::string ids;
    for (std::size_t d : down) ids += (ids.empty() ? "" : ";") + table.reaches[d].id;
    r.to_reach = ids;
  }
}

/// A line end no other line touches, and the nearest line it is not joined to.
struct LooseEnd {
  std::size_t rec;     ///< the record the end belongs to
  Point3 at;           ///< the end (its node)
  double distance_m;   ///< to the nearest line not joined to it (> the snap tolerance)
  std::size_t other;   ///< that line's record
};

/// Every free end (a node of degree 1) with the nearest line within
/// `radius_m` that it is not already joined to, farther than `tol_m`. A line
/// is joined to the end when it is the end's own line or shares a node with
/// it (at its other end): the end reaches that line through the network, so
/// being close to it is no gap.
std::vector<LooseEnd> looseEnds(const GeosContext& ctx, const ReachTable& table, const Graph& g,
                                const Metric& metric, double tol_m, double radius_m) {
  IndexTree tree(ctx);
  for (std::size_t i = 0; i < table.reaches.size(); ++i)
    if (g.from[i] != npos) tree.insert(makeLine(ctx, table.reaches[i].line), i);
  auto joined = [&](std::size_t i, std::size_t j) {
    return j == i || g.from[j] == g.from[i] || g.from[j] == g.to[i] || g.to[j] == g.from[i] ||
           g.to[j] == g.to[i];
  };
  std::vector<LooseEnd> out;
  for (std::size_t e = 0; e < 2 * table.reaches.size(); ++e) {
    const std::size_t i = e / 2;
    const std::size_t node = e % 2 == 0 ? g.from[i] : g.to[i];
    if (node == npos || g.degree[node] != 1) continue;
    const Point3 p = g.node[node];
    LooseEnd best{i, p, radius_m, npos};
    for (std::size_t j : tree.query(p.x, p.y, metric.searchRadius(p, radius_m))) {
      if (joined(i, j)) continue;
      const double d = metric.nearest(table.reaches[j].line, p).distance_m;
      if (d > tol_m && d <= best.distance_m) {
        best.distance_m = d;
        best.other = j;
      }
    }
    if (best.other != npos) out.push_back(best);
  }
  return out;
}

/// Probable gaps: loose ends within `search_m`, except the ends of reaches
/// named in options.unconnected; errors or warnings by options.gaps_are_errors.
std::size_t reportGaps(const ReachTable& table, const std::vector<LooseEnd>& loose, double tol_m,
                       double search_m, const TopologyOptions& options, ProblemList& problems) {
  std::size_t gaps = 0;
  const ProblemCode code = options.gaps_are_errors ? ProblemCode::ProbableGap : ProblemCode::UnresolvedGap;
  for (const LooseEnd& l : loose) {
    if (l.distance_m > search_m) continue;
    const auto& r = table.reaches[l.rec];
    if (matchesOutlet(r, options.unconnected)) continue;
    ++gaps;
    problems.push_back(reachProblem(
        code, r, l.at.x, l.at.y,
        fmt::format("an end of {} is {:.3g} m from {} but not connected (snap_tolerance_m {:g}, "
                    "gap_search_m {:g}){}",
                    r.id, l.distance_m, table.reaches[l.other].id, tol_m, search_m,
                    options.gaps_are_errors ? "" : "; left as a headwater or outlet")));
  }
  return gaps;
}

std::vector<NearMiss> nearMisses(const ReachTable& table, const std::vector<LooseEnd>& loose) {
  std::vector<NearMiss> out;
  for (const LooseEnd& l : loose) {
    if (l.distance_m > kNearMissBandsM.back()) continue;
    const auto& r = table.reaches[l.rec];
    out.push_back({r.id, r.fid, l.at.x, l.at.y, l.distance_m, table.reaches[l.other].id});
  }
  return out;
}

}  // namespace

TopologySummary buildTopologyFromGeometry(ReachTable& table, const TopologyOptions& options,
                                          ProblemList& problems) {
  const double tol_m = options.snap_tolerance_m;
  if (!(tol_m >= 0) || !std::isfinite(tol_m))
    throw InvalidParameter("snap_tolerance_m", "must be finite and >= 0");
  const double search_m = std::isnan(options.gap_search_m) ? 10.0 * tol_m : options.gap_search_m;
  if (!(search_m >= 0) || !std::isfinite(search_m))
    throw InvalidParameter("gap_search_m", "must be finite and >= 0");
  const CrsMetric& crs = options.crs;
  if (crs.geographic ? !(crs.a_m > 0 && crs.f >= 0 && crs.f < 1 && crs.degrees_per_unit > 0)
                     : !(crs.metres_per_unit > 0 && std::isfinite(crs.metres_per_unit)))
    throw InvalidParameter("crs", "needs a positive unit (and an ellipsoid when geographic)");
  for (const auto& id : options.unconnected) {
    const bool found = std::any_of(table.reaches.begin(), table.reaches.end(),
                                   [&](const ReachRecord& r) { return matchesOutlet(r, {id}); });
    if (!found) throw InvalidParameter("unconnected", "reach " + id + " is not in the layer");
  }
  const Metric metric(crs);
  GeosContext ctx;
  TopologySummary summary;
  addConnections(table, metric, options, problems);
  const std::vector<CutLine> cut_lines = splitLines(ctx, table, metric, options, tol_m);
  summary.splits = cut_lines.size();
  Graph g = snapEnds(ctx, table, metric, tol_m);
  summary.nodes = g.node.size();
  summary.snapped_ends = g.moved_ends;
  summary.largest_snap_m = g.largest_move_m;
  summary.connections = options.connections.size();
  const std::size_t oriented_from = problems.size();
  Orientation how = options.orientation;
  if (how == Orientation::Auto)
    how = options.outlets.empty() ? resolveAuto(table, g) : Orientation::Outlets;
  if (how == Orientation::Elevation) summary.flipped = orientByElevation(table, g, problems);
  if (how == Orientation::Outlets) summary.flipped = orientToOutlets(table, g, metric, options, problems);
  numberPieces(table, cut_lines, oriented_from, problems);
  linkDownstream(table, g, problems);
  const auto loose = looseEnds(ctx, table, g, metric, tol_m, std::max(search_m, kNearMissBandsM.back()));
  summary.probable_gaps = reportGaps(table, loose, tol_m, search_m, options, problems);
  summary.near_misses = nearMisses(table, loose);
  table.has_to_reach = true;
  return summary;
}

std::vector<NearMissBand> nearMissBands(const std::vector<NearMiss>& near_misses) {
  std::vector<NearMissBand> bands;
  for (const double within : kNearMissBandsM) {
    NearMissBand b{within, 0, 0.0};
    for (const auto& n : near_misses) {
      if (n.distance_m > within) continue;
      ++b.ends;
      b.join_tolerance_m = std::max(b.join_tolerance_m, n.distance_m);
    }
    bands.push_back(b);
  }
  return bands;
}

Problem nearMissProblem(const NearMiss& n) {
  Problem p(ProblemCode::NearMiss,
            fmt::format("an unconnected end of {} is {:.3g} m from {}", n.reach_id, n.distance_m,
                        n.other_reach_id));
  p.reach_id = n.reach_id;
  p.fid = n.fid;
  p.x = n.x;
  p.y = n.y;
  p.other_reach_id = n.other_reach_id;
  p.distance_m = n.distance_m;
  return p;
}

}  // namespace reachwise::network::geos
