#include "reachwise/network/geos/GeometryTopology.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <queue>

#include "GeosHandle.hpp"
#include "reachwise/network/ReachProblem.hpp"

namespace reachwise::network::geos {

namespace {

bool usable(const ReachRecord& r) {
  if (r.line.size() < 2) return false;
  for (const auto& p : r.line)
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) return false;
  return true;
}

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

/// For every line, the measures at which other lines' ends touch its interior.
std::vector<std::vector<double>> findCuts(const GeosContext& ctx, const ReachTable& table,
                                          double tol, ProblemList& problems) {
  const auto& rs = table.reaches;
  std::vector<GeomPtr> lines;
  IndexTree tree(ctx);
  for (std::size_t i = 0; i < rs.size(); ++i) {
    lines.push_back(usable(rs[i]) ? makeLine(ctx, rs[i].line) : GeomPtr(nullptr, {ctx.get()}));
    if (lines.back()) tree.insert(makeLine(ctx, rs[i].line), i);
  }
  std::vector<std::vector<double>> cuts(rs.size());
  for (std::size_t i = 0; i < rs.size(); ++i) {
    if (!lines[i]) continue;
    for (const Point3* end : {&rs[i].line.front(), &rs[i].line.back()}) {
      GeomPtr pt = makePoint(ctx, end->x, end->y);
      for (std::size_t j : tree.query(end->x, end->y, tol)) {
        if (j == i) continue;
        double d = 0;
        if (!GEOSDistance_r(ctx.get(), lines[j].get(), pt.get(), &d) || d > tol) continue;
        const double m = GEOSProject_r(ctx.get(), lines[j].get(), pt.get());
        double len = 0;
        GEOSGeomGetLength_r(ctx.get(), lines[j].get(), &len);
        if (!(m > tol && m < len - tol)) continue;  // near an end: snapping handles it
        cuts[j].push_back(m);
        problems.push_back(reachProblem(
            ProblemCode::SplitLine, rs[j], end->x, end->y,
            fmt::format("line {} is cut where the end of {} meets it", rs[j].id, rs[i].id)));
      }
    }
  }
  for (auto& c : cuts) {
    std::sort(c.begin(), c.end());
    // Ends of several lines at one junction give one cut.
    c.erase(std::unique(c.begin(), c.end(), [tol](double a, double b) { return b - a <= tol; }),
            c.end());
  }
  return cuts;
}

/// Replaces each cut line by its pieces `<id>.1`, `<id>.2`, ...
std::size_t splitLines(const GeosContext& ctx, ReachTable& table, double tol,
                       ProblemList& problems) {
  const auto cuts = findCuts(ctx, table, tol, problems);
  std::vector<ReachRecord> out;
  std::size_t n_split = 0;
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    ReachRecord& r = table.reaches[i];
    if (cuts[i].empty()) {
      out.push_back(std::move(r));
      continue;
    }
    ++n_split;
    const double total = measures(r.line).back();
    const auto pieces = cutLine(r.line, cuts[i]);
    for (std::size_t k = 0; k < pieces.size(); ++k) {
      ReachRecord piece = r;
      piece.id = r.id + "." + std::to_string(k + 1);
      piece.line = pieces[k];
      const double share = total > 0 ? measures(pieces[k]).back() / total : 0.0;
      piece.length_m = r.length_m * share;
      piece.geometry_length_m = r.geometry_length_m * share;
      out.push_back(std::move(piece));
    }
  }
  table.reaches = std::move(out);
  return n_split;
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
};
constexpr std::size_t npos = static_cast<std::size_t>(-1);

/// End point 2i is the first vertex of record i, 2i+1 its last.
Point3& endPoint(ReachTable& t, std::size_t e) {
  auto& line = t.reaches[e / 2].line;
  return e % 2 == 0 ? line.front() : line.back();
}

Graph snapEnds(const GeosContext& ctx, ReachTable& table, double tol) {
  const std::size_t n = table.reaches.size();
  IndexTree tree(ctx);
  for (std::size_t e = 0; e < 2 * n; ++e)
    if (usable(table.reaches[e / 2]))
      tree.insert(makePoint(ctx, endPoint(table, e).x, endPoint(table, e).y), e);
  UnionFind uf(2 * n);
  for (std::size_t e = 0; e < 2 * n; ++e) {
    if (!usable(table.reaches[e / 2])) continue;
    const Point3 p = endPoint(table, e);
    for (std::size_t f : tree.query(p.x, p.y, tol)) {
      const Point3 q = endPoint(table, f);
      if (std::hypot(p.x - q.x, p.y - q.y) <= tol) uf.unite(e, f);
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
    p.x = g.node[it->second].x;
    p.y = g.node[it->second].y;
  }
  return g;
}

// ---------------------------------------------------------------- orientation

void flip(ReachRecord& r, Graph& g, std::size_t i, ProblemList& problems, const char* why) {
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

bool matchesOutlet(const std::string& id, const std::vector<std::string>& outlets) {
  for (const auto& o : outlets)
    if (id == o || (id.size() > o.size() && id.compare(0, o.size() + 1, o + ".") == 0))
      return true;
  return false;
}

/// The outlet node of the component reached by `b`.
std::size_t chooseOutlet(const ReachTable& table, const Graph& g,
                         const std::vector<std::vector<std::size_t>>& inc, Bfs& b,
                         const TopologyOptions& opt) {
  std::vector<std::size_t> named, leaves;
  for (std::size_t u : b.order) {
    if (inc[u].size() != 1) continue;
    const std::size_t rec = inc[u].front();
    leaves.push_back(u);
    if (matchesOutlet(table.reaches[rec].id, opt.outlets)) named.push_back(u);
  }
  // A named single-line part has two free ends: prefer its digitised downstream end.
  std::sort(named.begin(), named.end(), [&](std::size_t a, std::size_t c) {
    return (g.to[inc[a].front()] == a) > (g.to[inc[c].front()] == c);
  });
  if (!named.empty()) return named.front();
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

std::size_t orientToOutlets(ReachTable& table, Graph& g, const TopologyOptions& opt,
                            ProblemList& problems) {
  const auto inc = incidence(g);
  std::vector<bool> seen(g.node.size(), false);
  std::vector<bool> done(table.reaches.size(), false);
  Bfs b(g.node.size());
  std::size_t flips = 0;
  for (std::size_t start = 0; start < g.node.size(); ++start) {
    if (seen[start] || inc[start].empty()) continue;
    b.run(g, inc, start);
    for (std::size_t u : b.order) seen[u] = true;
    const std::size_t outlet = chooseOutlet(table, g, inc, b, opt);
    b.run(g, inc, outlet);
    for (std::size_t u : b.order) {
      for (std::size_t rec : inc[u]) {
        if (done[rec]) continue;
        done[rec] = true;
        const std::size_t v = other(g, rec, u);
        // Flow goes from the end farther from the outlet; level ends keep digitising order.
        const std::size_t up = b.depth[u] > b.depth[v] ? u : v;
        if (b.depth[u] == b.depth[v] || g.from[rec] == up) continue;
        flip(table.reaches[rec], g, rec, problems, "oriented to flow towards its outlet");
        ++flips;
      }
    }
  }
  return flips;
}

void reportUnknownOutlets(const ReachTable& table, const TopologyOptions& opt,
                          ProblemList& problems) {
  for (const auto& o : opt.outlets) {
    const bool found = std::any_of(table.reaches.begin(), table.reaches.end(),
                                   [&](const ReachRecord& r) { return matchesOutlet(r.id, {o}); });
    if (found) continue;
    Problem p(ProblemCode::UnknownOutlet,
              fmt::format("outlet {} named in the config is not a reach of the layer", o));
    p.reach_id = o;
    problems.push_back(std::move(p));
  }
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
  double distance;     ///< to the nearest line not joined to it, CRS units (> tolerance)
  std::size_t other;   ///< that line's record
};

/// Every free end (a node of degree 1) with the nearest line within `radius`
/// (CRS units) that it is not already joined to, farther than `tol`. A line
/// is joined to the end when it is the end's own line or shares a node with
/// it (at its other end): the end reaches that line through the network, so
/// being close to it is no gap.
std::vector<LooseEnd> looseEnds(const GeosContext& ctx, const ReachTable& table, const Graph& g,
                                double tol, double radius) {
  IndexTree tree(ctx);
  std::vector<GeomPtr> lines;
  for (std::size_t i = 0; i < table.reaches.size(); ++i) {
    const bool in = g.from[i] != npos;
    lines.push_back(in ? makeLine(ctx, table.reaches[i].line) : GeomPtr(nullptr, {ctx.get()}));
    if (in) tree.insert(makeLine(ctx, table.reaches[i].line), i);
  }
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
    GeomPtr pt = makePoint(ctx, p.x, p.y);
    LooseEnd best{i, p, radius, npos};
    for (std::size_t j : tree.query(p.x, p.y, radius)) {
      double d = 0;
      if (joined(i, j) || !GEOSDistance_r(ctx.get(), lines[j].get(), pt.get(), &d)) continue;
      if (d > tol && d <= best.distance) {
        best.distance = d;
        best.other = j;
      }
    }
    if (best.other != npos) out.push_back(best);
  }
  return out;
}

std::size_t reportGaps(const ReachTable& table, const std::vector<LooseEnd>& loose, double tol,
                       double factor, ProblemList& problems) {
  std::size_t gaps = 0;
  for (const LooseEnd& l : loose) {
    if (l.distance > factor * tol) continue;
    ++gaps;
    const auto& r = table.reaches[l.rec];
    problems.push_back(reachProblem(
        ProblemCode::ProbableGap, r, l.at.x, l.at.y,
        fmt::format("an end of {} is {:.3g} CRS units from {} but not connected (snap tolerance "
                    "{:.3g})",
                    r.id, l.distance, table.reaches[l.other].id, tol)));
  }
  return gaps;
}

std::vector<NearMiss> nearMisses(const ReachTable& table, const std::vector<LooseEnd>& loose,
                                 double metres_per_unit) {
  std::vector<NearMiss> out;
  for (const LooseEnd& l : loose) {
    const double d_m = l.distance * metres_per_unit;
    if (d_m > kNearMissBandsM.back()) continue;
    const auto& r = table.reaches[l.rec];
    out.push_back({r.id, r.fid, l.at.x, l.at.y, d_m, table.reaches[l.other].id});
  }
  return out;
}

}  // namespace

TopologySummary buildTopologyFromGeometry(ReachTable& table, const TopologyOptions& options,
                                          ProblemList& problems) {
  if (!(options.snap_tolerance >= 0) || !std::isfinite(options.snap_tolerance))
    throw InvalidParameter("snap_tolerance", "must be finite and >= 0");
  GeosContext ctx;
  const double tol = options.snap_tolerance;
  TopologySummary summary;
  summary.splits = splitLines(ctx, table, tol, problems);
  Graph g = snapEnds(ctx, table, tol);
  summary.nodes = g.node.size();
  Orientation how = options.orientation;
  if (how == Orientation::Auto) how = resolveAuto(table, g);
  if (how == Orientation::Elevation) summary.flipped = orientByElevation(table, g, problems);
  if (how == Orientation::Outlets) {
    reportUnknownOutlets(table, options, problems);
    summary.flipped = orientToOutlets(table, g, options, problems);
  }
  linkDownstream(table, g, problems);
  if (!(options.metres_per_unit > 0) || !std::isfinite(options.metres_per_unit))
    throw InvalidParameter("metres_per_unit", "must be finite and > 0");
  const double radius =
      std::max(options.gap_factor * tol, kNearMissBandsM.back() / options.metres_per_unit);
  const auto loose = looseEnds(ctx, table, g, tol, radius);
  summary.probable_gaps = reportGaps(table, loose, tol, options.gap_factor, problems);
  summary.near_misses = nearMisses(table, loose, options.metres_per_unit);
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
