#include "reachwise/network/SyntheticNetwork.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <random>

#include "reachwise/Error.hpp"

namespace reachwise::network {
namespace {

// ---- random numbers with a fixed algorithm (see the header) ----

/// Uniform in [0, 1) from the top 53 bits of one 64-bit draw.
double uniform01(std::mt19937_64& gen) { return static_cast<double>(gen() >> 11) * 0x1.0p-53; }

/// Uniform integer in [0, n), n >= 1, without modulo bias: draws below
/// 2^64 mod n are rejected (the method of OpenBSD's arc4random_uniform).
std::uint32_t uniformBelow(std::mt19937_64& gen, std::uint32_t n) {
  const std::uint64_t m = n;
  const std::uint64_t threshold = (0 - m) % m;
  std::uint64_t x = gen();
  while (x < threshold) x = gen();
  return static_cast<std::uint32_t>(x % m);
}

/// Log-uniform in [lo, hi].
double logUniform(std::mt19937_64& gen, double lo, double hi) {
  return lo * std::exp(std::log(hi / lo) * uniform01(gen));
}

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom
/// number generators", OOPSLA): a counter-based hash for per-reach jitter.
std::uint64_t splitMix64(std::uint64_t x) {
  x += 0x9E3779B97F4A7C15ull;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
  return x ^ (x >> 31);
}

double hashUniform(std::uint64_t seed, std::uint64_t stream, std::uint64_t index) {
  const std::uint64_t h = splitMix64(splitMix64(seed ^ (stream * 0xD1B54A32D192ED03ull)) + index);
  return static_cast<double>(h >> 11) * 0x1.0p-53;
}

// ---- the grid ----

/// Grid gaps, km: reach lengths end up in 0.5-5 km (a grid edge is
/// 0.8-1.2 gaps long along its axis).
constexpr double kMinGap_m = 700.0;
constexpr double kMaxGap_m = 4000.0;
/// Node jitter and meander offsets as shares of the smallest adjacent gap.
/// Kept below a quarter of a gap: then every line stays in its own band
/// around its grid edge and only lines sharing a node can meet (at it).
constexpr double kNodeJitter = 0.10;
constexpr double kMeander = 0.05;

struct Grid {
  std::size_t n = 0, cols = 0, rows = 0;
  std::vector<double> x, y;          ///< column and row positions
  std::vector<double> col_gap_min;   ///< smallest gap beside each column
  std::vector<double> row_gap_min;   ///< smallest gap beside each row
  std::size_t row0() const { return std::min(cols, n); }
  std::size_t col(std::size_t i) const { return i % cols; }
  std::size_t row(std::size_t i) const { return i / cols; }
};

std::vector<double> positions(std::mt19937_64& gen, std::size_t count, double origin,
                              std::vector<double>& gap_min) {
  std::vector<double> gaps(count > 0 ? count - 1 : 0);
  for (double& g : gaps) g = logUniform(gen, kMinGap_m, kMaxGap_m);
  std::vector<double> pos(count);
  gap_min.assign(count, kMaxGap_m);
  double at = origin;
  for (std::size_t k = 0; k < count; ++k) {
    pos[k] = at;
    if (k > 0) gap_min[k] = std::min(gap_min[k], gaps[k - 1]);
    if (k + 1 < count) {
      gap_min[k] = std::min(gap_min[k], gaps[k]);
      at += gaps[k];
    }
  }
  return pos;
}

/// Neighbours of node i inside the first n nodes of the row-major grid.
struct Neighbours {
  std::uint32_t node[4];
  std::uint32_t count = 0;
};

Neighbours neighbours(const Grid& g, std::size_t i) {
  Neighbours nb;
  const std::size_t c = g.col(i);
  if (c > 0) nb.node[nb.count++] = static_cast<std::uint32_t>(i - 1);
  if (c + 1 < g.cols && i + 1 < g.n) nb.node[nb.count++] = static_cast<std::uint32_t>(i + 1);
  if (i >= g.cols) nb.node[nb.count++] = static_cast<std::uint32_t>(i - g.cols);
  if (i + g.cols < g.n) nb.node[nb.count++] = static_cast<std::uint32_t>(i + g.cols);
  return nb;
}

/// Wilson's algorithm: loop-erased random walks from each node in turn until
/// they hit the tree; the last exit taken from each node is its parent
/// (overwriting the exit erases loops). Gives a uniform spanning forest
/// rooted at `roots` (Wilson 1996).
std::vector<std::uint32_t> wilsonForest(std::mt19937_64& gen, const Grid& g,
                                        const std::vector<std::uint32_t>& roots) {
  std::vector<std::uint32_t> next(g.n, kSyntheticOutlet);
  std::vector<char> in_tree(g.n, 0);
  for (std::uint32_t r : roots) in_tree[r] = 1;
  for (std::size_t start = 0; start < g.n; ++start) {
    std::size_t u = start;
    while (!in_tree[u]) {
      const Neighbours nb = neighbours(g, u);
      next[u] = nb.node[uniformBelow(gen, nb.count)];
      u = next[u];
    }
    for (u = start; !in_tree[u]; u = next[u]) in_tree[u] = 1;
  }
  return next;
}

/// Roots spread evenly along the southern row.
std::vector<std::uint32_t> rootNodes(const Grid& g, std::size_t outlets) {
  std::vector<std::uint32_t> roots;
  for (std::size_t j = 0; j < outlets; ++j)
    roots.push_back(static_cast<std::uint32_t>((2 * j + 1) * g.row0() / (2 * outlets)));
  return roots;
}

// ---- geometry ----

void drawLines(std::mt19937_64& gen, const Grid& g, const std::vector<Point2>& node,
               const std::vector<double>& outlet_gap, SyntheticNetwork& net) {
  net.vertex_begin.assign(g.n + 1, 0);
  net.vertices.clear();
  net.vertices.reserve(g.n * 3);
  net.length_m.assign(g.n, 0.0);
  for (std::size_t i = 0; i < g.n; ++i) {
    net.vertex_begin[i] = static_cast<std::uint32_t>(net.vertices.size());
    const Point2 a = node[i];
    const std::uint32_t d = net.downstream[i];
    const Point2 b = d != kSyntheticOutlet ? node[d] : Point2{a.x, g.y[0] - outlet_gap[i]};
    const bool along_row = d != kSyntheticOutlet && g.row(d) == g.row(i);
    // Offsets across the edge: y for an edge along a row, x for one along a column.
    const double across = along_row ? g.row_gap_min[g.row(i)] : g.col_gap_min[g.col(i)];
    const std::uint32_t middle = uniformBelow(gen, 3);  // 0, 1 or 2 meander vertices
    net.vertices.push_back(a);
    for (std::uint32_t k = 1; k <= middle; ++k) {
      const double t = static_cast<double>(k) / (middle + 1);
      const double offset = kMeander * across * (2 * uniform01(gen) - 1);
      Point2 p{a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)};
      (along_row ? p.y : p.x) += offset;
      net.vertices.push_back(p);
    }
    net.vertices.push_back(b);
    double length = 0;
    for (std::size_t v = net.vertex_begin[i] + 1; v < net.vertices.size(); ++v)
      length += std::hypot(net.vertices[v].x - net.vertices[v - 1].x,
                           net.vertices[v].y - net.vertices[v - 1].y);
    net.length_m[i] = length;
  }
  net.vertex_begin[g.n] = static_cast<std::uint32_t>(net.vertices.size());
  net.min_x_m = net.min_y_m = std::numeric_limits<double>::infinity();
  net.max_x_m = net.max_y_m = -std::numeric_limits<double>::infinity();
  for (const Point2& p : net.vertices) {
    net.min_x_m = std::min(net.min_x_m, p.x);
    net.max_x_m = std::max(net.max_x_m, p.x);
    net.min_y_m = std::min(net.min_y_m, p.y);
    net.max_y_m = std::max(net.max_y_m, p.y);
  }
}

// ---- attributes ----

/// Reaches with every upstream reach before them (Kahn's algorithm from the
/// headwaters).
std::vector<std::uint32_t> upstreamFirst(const std::vector<std::uint32_t>& downstream) {
  const std::size_t n = downstream.size();
  std::vector<std::uint32_t> pending(n, 0);
  for (std::uint32_t d : downstream)
    if (d != kSyntheticOutlet) ++pending[d];
  std::vector<std::uint32_t> order;
  order.reserve(n);
  for (std::size_t i = 0; i < n; ++i)
    if (pending[i] == 0) order.push_back(static_cast<std::uint32_t>(i));
  for (std::size_t k = 0; k < order.size(); ++k) {
    const std::uint32_t d = downstream[order[k]];
    if (d != kSyntheticOutlet && --pending[d] == 0) order.push_back(d);
  }
  REACHWISE_ASSERT(order.size() == n);
  return order;
}

/// Hydraulic geometry from the contributing channel length L (km), used as
/// a proxy for drainage area at a uniform drainage density (common practice):
///  - bottom width b = 1 m * L^0.5, the downstream hydraulic-geometry exponent
///    of width on discharge (Leopold & Maddock 1953, "The hydraulic geometry
///    of stream channels", USGS Prof. Paper 252), discharge taken ∝ area;
///  - bed slope S = 0.01 * L^-0.5, the slope-area power law with concavity
///    0.5 (Flint 1974, "Stream gradient as a function of order, magnitude,
///    and discharge", Water Resour. Res. 10(5)), coefficient from memory;
///  - Manning's n from 0.05 (small streams) falling to 0.025 (large
///    rivers), the range of natural channels (Chow 1959, Open-Channel
///    Hydraulics, table 5-6, from memory).
/// Each gets a seeded ±15 % jitter; then slope is capped by the smallest
/// slope and width raised to the largest width upstream, so that slope
/// never rises and width never falls going downstream.
void assignAttributes(std::mt19937_64& gen, SyntheticNetwork& net) {
  const std::size_t n = net.size();
  std::vector<double> slope_jitter(n), width_jitter(n), n_jitter(n);
  net.side_slope.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    slope_jitter[i] = std::exp(0.15 * (2 * uniform01(gen) - 1));
    width_jitter[i] = std::exp(0.15 * (2 * uniform01(gen) - 1));
    n_jitter[i] = 0.005 * (2 * uniform01(gen) - 1);
    net.side_slope[i] = 1.5 + 1.5 * uniform01(gen);  // 1.5-3 H:1V banks (common practice)
  }
  net.upstream_length_m.assign(n, 0.0);
  net.slope.assign(n, std::numeric_limits<double>::infinity());
  net.bottom_width_m.assign(n, 0.0);
  net.manning_n.assign(n, 0.0);
  for (std::uint32_t i : upstreamFirst(net.downstream)) {
    net.upstream_length_m[i] += net.length_m[i];
    const double km = net.upstream_length_m[i] / 1000.0;
    const double slope = std::clamp(0.01 / std::sqrt(km) * slope_jitter[i], 1e-5, 0.03);
    const double width = std::clamp(1.0 * std::sqrt(km) * width_jitter[i], 1.0, 1000.0);
    net.slope[i] = std::min(net.slope[i], slope);          // holds the upstream minimum
    net.bottom_width_m[i] = std::max(net.bottom_width_m[i], width);  // the upstream maximum
    net.manning_n[i] = std::clamp(0.05 - 0.004 * std::log10(km) + n_jitter[i], 0.025, 0.06);
    const std::uint32_t d = net.downstream[i];
    if (d == kSyntheticOutlet) continue;
    net.upstream_length_m[d] += net.upstream_length_m[i];
    net.slope[d] = std::min(net.slope[d], net.slope[i]);
    net.bottom_width_m[d] = std::max(net.bottom_width_m[d], net.bottom_width_m[i]);
  }
}

/// Depth-first post-order from the roots (children by grid index): every
/// reach after all reaches upstream of it, and each subtree contiguous.
std::vector<std::uint32_t> postOrder(const std::vector<std::uint32_t>& downstream,
                                     const std::vector<std::uint32_t>& roots) {
  const std::size_t n = downstream.size();
  std::vector<std::uint32_t> begin(n + 1, 0), child(n);
  for (std::uint32_t d : downstream)
    if (d != kSyntheticOutlet) ++begin[d + 1];
  for (std::size_t i = 0; i < n; ++i) begin[i + 1] += begin[i];
  std::vector<std::uint32_t> fill(begin.begin(), begin.end() - 1);
  for (std::size_t i = 0; i < n; ++i)
    if (downstream[i] != kSyntheticOutlet) child[fill[downstream[i]]++] = static_cast<std::uint32_t>(i);
  std::vector<std::uint32_t> order;
  order.reserve(n);
  std::vector<std::pair<std::uint32_t, std::uint32_t>> stack;  // node, next child slot
  for (std::uint32_t root : roots) {
    stack.emplace_back(root, begin[root]);
    while (!stack.empty()) {
      auto& [node, next] = stack.back();
      if (next < begin[node + 1]) {
        const std::uint32_t c = child[next++];
        stack.emplace_back(c, begin[c]);
      } else {
        order.push_back(node);
        stack.pop_back();
      }
    }
  }
  REACHWISE_ASSERT(order.size() == n);
  return order;
}

/// Renumbers the reaches so that reach k is order[k].
SyntheticNetwork renumbered(const SyntheticNetwork& in, const std::vector<std::uint32_t>& order) {
  const std::size_t n = in.size();
  std::vector<std::uint32_t> position(n);
  for (std::size_t k = 0; k < n; ++k) position[order[k]] = static_cast<std::uint32_t>(k);
  SyntheticNetwork out;
  out.min_x_m = in.min_x_m, out.max_x_m = in.max_x_m, out.min_y_m = in.min_y_m, out.max_y_m = in.max_y_m;
  const auto permute = [&](const std::vector<double>& v) {
    std::vector<double> r(n);
    for (std::size_t k = 0; k < n; ++k) r[k] = v[order[k]];
    return r;
  };
  out.length_m = permute(in.length_m);
  out.upstream_length_m = permute(in.upstream_length_m);
  out.slope = permute(in.slope);
  out.manning_n = permute(in.manning_n);
  out.bottom_width_m = permute(in.bottom_width_m);
  out.side_slope = permute(in.side_slope);
  out.downstream.resize(n);
  out.vertex_begin.reserve(n + 1);
  out.vertices.reserve(in.vertices.size());
  for (std::size_t k = 0; k < n; ++k) {
    const std::uint32_t d = in.downstream[order[k]];
    out.downstream[k] = d == kSyntheticOutlet ? kSyntheticOutlet : position[d];
    out.vertex_begin.push_back(static_cast<std::uint32_t>(out.vertices.size()));
    const auto line = in.line(order[k]);
    out.vertices.insert(out.vertices.end(), line.begin(), line.end());
  }
  out.vertex_begin.push_back(static_cast<std::uint32_t>(out.vertices.size()));
  return out;
}

}  // namespace

std::string SyntheticNetwork::id(std::size_t reach) { return "R" + std::to_string(reach); }

std::vector<std::uint32_t> SyntheticNetwork::outlets() const {
  std::vector<std::uint32_t> out;
  for (std::size_t i = 0; i < size(); ++i)
    if (downstream[i] == kSyntheticOutlet) out.push_back(static_cast<std::uint32_t>(i));
  return out;
}

SyntheticNetwork generateSyntheticNetwork(const SyntheticOptions& options) {
  const std::size_t n = options.reaches;
  if (n == 0) throw InvalidParameter("reaches", "at least 1 reach is needed");
  if (n >= kSyntheticOutlet) throw InvalidParameter("reaches", "at most 4294967294 reaches");
  Grid g;
  g.n = n;
  g.cols = static_cast<std::size_t>(std::ceil(std::sqrt(static_cast<double>(n))));
  g.rows = (n + g.cols - 1) / g.cols;
  if (options.outlets == 0 || options.outlets > g.row0())
    throw InvalidParameter("outlets", "must be between 1 and " + std::to_string(g.row0()) +
                                          " (the width of the grid) for " + std::to_string(n) +
                                          " reaches");
  std::mt19937_64 gen(options.seed);
  // Outlet points lie up to one gap south of the first row.
  g.x = positions(gen, g.cols, options.origin_x_m, g.col_gap_min);
  g.y = positions(gen, g.rows, options.origin_y_m + kMaxGap_m, g.row_gap_min);
  const std::vector<std::uint32_t> roots = rootNodes(g, options.outlets);
  std::vector<double> outlet_gap(n, 0.0);
  for (std::uint32_t r : roots) {
    outlet_gap[r] = logUniform(gen, kMinGap_m, kMaxGap_m);
    g.row_gap_min[0] = std::min(g.row_gap_min[0], outlet_gap[r]);
  }
  std::vector<Point2> node(n);
  for (std::size_t i = 0; i < n; ++i) {
    node[i].x = g.x[g.col(i)] + kNodeJitter * g.col_gap_min[g.col(i)] * (2 * uniform01(gen) - 1);
    node[i].y = g.y[g.row(i)] + kNodeJitter * g.row_gap_min[g.row(i)] * (2 * uniform01(gen) - 1);
  }
  SyntheticNetwork net;
  net.downstream = wilsonForest(gen, g, roots);
  drawLines(gen, g, node, outlet_gap, net);
  assignAttributes(gen, net);
  // Grid order scatters a subtree over many rows; depth-first order keeps
  // it together in the layer and in the forcing file, as coded river
  // networks usually are, and makes the feature order a topological order.
  return renumbered(net, postOrder(net.downstream, roots));
}

ReachTable toReachTable(const SyntheticNetwork& net) {
  ReachTable table;
  table.source = "synthetic";
  table.layer = "reaches";
  table.has_to_reach = true;
  table.reaches.resize(net.size());
  for (std::size_t i = 0; i < net.size(); ++i) {
    ReachRecord& r = table.reaches[i];
    r.id = SyntheticNetwork::id(i);
    r.fid = static_cast<std::int64_t>(i) + 1;
    if (net.downstream[i] != kSyntheticOutlet) r.to_reach = SyntheticNetwork::id(net.downstream[i]);
    for (const Point2& p : net.line(i)) r.line.push_back({p.x, p.y});
    r.length_m = r.geometry_length_m = net.length_m[i];
    r.section.shape = hydraulics::Shape::Trapezoid;
    r.section.bottom_width_m = net.bottom_width_m[i];
    r.section.side_slope = net.side_slope[i];
    r.section.manning_n = net.manning_n[i];
    r.section.bed_slope = net.slope[i];
  }
  return table;
}

// ---- lakes ----

std::string SyntheticLake::id(std::size_t lake) { return "L" + std::to_string(lake); }

std::vector<SyntheticLake> syntheticLakes(const SyntheticNetwork& net, std::size_t count, std::uint64_t seed) {
  if (count == 0) return {};
  const std::size_t n = net.size();
  std::vector<char> has_inflow(n, 0);
  for (std::uint32_t d : net.downstream)
    if (d != kSyntheticOutlet) has_inflow[d] = 1;
  std::vector<std::uint32_t> candidates;
  for (std::size_t i = 0; i < n; ++i)
    if (has_inflow[i]) candidates.push_back(static_cast<std::uint32_t>(i));
  if (count > candidates.size())
    throw InvalidParameter("lakes", "at most " + std::to_string(candidates.size()) +
                                        " lakes fit this network (one per node with a reach flowing in)");
  // The first `count` places of a Fisher–Yates shuffle (Knuth, TAOCP vol. 2,
  // Algorithm 3.4.2 P) from a generator of its own, so the lakes do not
  // change the network drawn from the same seed.
  std::mt19937_64 gen(splitMix64(seed ^ 0x6C616B6573ull));
  for (std::size_t k = 0; k < count; ++k) {
    const std::size_t j = k + uniformBelow(gen, static_cast<std::uint32_t>(candidates.size() - k));
    std::swap(candidates[k], candidates[j]);
  }
  candidates.resize(count);
  std::sort(candidates.begin(), candidates.end());
  constexpr int kSides = 12;
  constexpr double kPi = 3.14159265358979323846;
  std::vector<SyntheticLake> lakes(count);
  for (std::size_t k = 0; k < count; ++k) {
    SyntheticLake& lake = lakes[k];
    lake.reach = candidates[k];
    const Point2 node = net.line(lake.reach).front();
    lake.radius_m = 80.0 + 120.0 * uniform01(gen);
    const double turn = 2 * kPi * uniform01(gen) / kSides;
    for (int v = 0; v < kSides; ++v) {
      const double a = turn + 2 * kPi * v / kSides;
      lake.ring.push_back({node.x + lake.radius_m * std::cos(a), node.y + lake.radius_m * std::sin(a)});
    }
    lake.crest_level_m = 100.0;
    lake.weir_length_m = std::clamp(0.5 * net.bottom_width_m[lake.reach], 2.0, 50.0);
  }
  return lakes;
}

// ---- forcing ----

namespace {

struct StormTiming {
  double period_s, front_start_s, crossing_s, time_to_peak_s;
  std::size_t storms;
};

StormTiming stormTiming(const SyntheticStorm& storm, const routing::TimeAxis& axis) {
  StormTiming t;
  const double duration = std::max(axis.duration_s(), axis.dt_s);
  t.period_s = std::min(storm.period_s, duration);
  t.storms = static_cast<std::size_t>(std::ceil(duration / t.period_s - 1e-9));
  t.front_start_s = 0.05 * t.period_s;
  t.crossing_s = 0.30 * t.period_s;
  t.time_to_peak_s = std::max(2 * axis.dt_s, 0.04 * t.period_s);
  return t;
}

/// The storm pulse of `reach` alone (no base flow, no length scaling).
void stormPulse(const SyntheticNetwork& net, std::size_t reach, const SyntheticStorm& storm,
                const routing::TimeAxis& axis, const StormTiming& timing, std::span<double> out) {
  const auto line = net.line(reach);
  const double mid_x = 0.5 * (line.front().x + line.back().x);
  const double width = std::max(net.max_x_m - net.min_x_m, 1.0);
  const double k1 = storm.gamma_shape - 1;
  std::fill(out.begin(), out.end(), 0.0);
  for (std::size_t j = 0; j < timing.storms; ++j) {
    const double magnitude = 0.5 + hashUniform(storm.seed, 1, j);  // 0.5-1.5 per storm
    const double delay = 0.01 * timing.period_s * (2 * hashUniform(storm.seed, 2 + j, reach) - 1);
    const double front = static_cast<double>(j) * timing.period_s + timing.front_start_s +
                         timing.crossing_s * (mid_x - net.min_x_m) / width + delay;
    const double end = front + 20 * timing.time_to_peak_s;  // the pulse is < 1e-12 after
    for (std::size_t k = 0; k < out.size(); ++k) {
      const double tau = static_cast<double>(k) * axis.dt_s - front;
      if (tau <= 0) continue;
      if (tau + front > end) break;
      const double r = tau / timing.time_to_peak_s;
      out[k] += magnitude * std::pow(r, k1) * std::exp(-k1 * (r - 1));
    }
  }
}

}  // namespace

void syntheticLateral(const SyntheticNetwork& net, std::size_t reach, const SyntheticStorm& storm,
                      const routing::TimeAxis& axis, std::span<double> out) {
  REACHWISE_ASSERT(reach < net.size());
  REACHWISE_ASSERT(out.size() == axis.steps);
  if (!(storm.gamma_shape > 1)) throw InvalidParameter("gamma_shape", "must be > 1");
  if (!(storm.period_s > 0)) throw InvalidParameter("storm period", "must be > 0");
  const StormTiming timing = stormTiming(storm, axis);
  stormPulse(net, reach, storm, axis, timing, out);
  const double scale = net.length_m[reach] / 1000.0 * (0.7 + 0.6 * hashUniform(storm.seed, 0, reach));
  for (double& q : out) q = scale * (storm.base_m3s_per_km + storm.peak_m3s_per_km * q);
}

std::vector<SyntheticInflow> syntheticInflow(const SyntheticNetwork& net, const SyntheticStorm& storm,
                                             const routing::TimeAxis& axis) {
  // Longest flow path to each reach's bottom and the headwater it starts at.
  const std::size_t n = net.size();
  std::vector<double> path(n, 0.0);
  std::vector<std::uint32_t> source(n);
  for (std::size_t i = 0; i < n; ++i) source[i] = static_cast<std::uint32_t>(i);
  for (std::uint32_t i : upstreamFirst(net.downstream)) {
    path[i] += net.length_m[i];
    const std::uint32_t d = net.downstream[i];
    if (d != kSyntheticOutlet && path[i] > path[d]) {
      path[d] = path[i];
      source[d] = source[i];
    }
  }
  std::vector<SyntheticInflow> out;
  for (std::uint32_t outlet : net.outlets()) {
    SyntheticInflow inflow{source[outlet], std::vector<double>(axis.steps)};
    syntheticLateral(net, inflow.reach, storm, axis, inflow.discharge_m3s);
    for (double& q : inflow.discharge_m3s) q *= 20.0;
    out.push_back(std::move(inflow));
  }
  return out;
}

}  // namespace reachwise::network
