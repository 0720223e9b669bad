#include "reachwise/network/ReachGraph.hpp"

#include <boost/graph/adjacency_list.hpp>
#include <boost/property_map/property_map.hpp>
#include <boost/graph/strong_components.hpp>
#include <boost/graph/topological_sort.hpp>
#include <boost/pending/disjoint_sets.hpp>

#include <algorithm>
#include <cmath>
#include <iterator>
#include <limits>

#include "reachwise/Error.hpp"

namespace reachwise::network {

namespace {

std::string_view trim(std::string_view s) {
  const auto blank = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; };
  while (!s.empty() && blank(s.front())) s.remove_prefix(1);
  while (!s.empty() && blank(s.back())) s.remove_suffix(1);
  return s;
}

double squaredDistance(const Point3& a, const Point3& b) {
  const double dx = a.x - b.x, dy = a.y - b.y;
  return dx * dx + dy * dy;
}

/// Squared distance from p to the nearer end of `line` (infinite when empty).
double toNearerEnd(const Point3& p, const std::vector<Point3>& line) {
  if (line.empty()) return std::numeric_limits<double>::infinity();
  return std::min(squaredDistance(p, line.front()), squaredDistance(p, line.back()));
}

Point2 flat(const Point3& p) { return Point2{p.x, p.y}; }

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

}  // namespace

std::vector<std::string_view> parseDownstreamIds(std::string_view to_reach) {
  std::vector<std::string_view> ids;
  while (!to_reach.empty()) {
    const auto cut = to_reach.find_first_of(";,");
    const auto piece = trim(to_reach.substr(0, cut));
    if (!piece.empty() && std::find(ids.begin(), ids.end(), piece) == ids.end())
      ids.push_back(piece);
    if (cut == std::string_view::npos) break;
    to_reach.remove_prefix(cut + 1);
  }
  return ids;
}

struct ReachGraph::Links {
  struct Link {
    double fraction = 1.0;  ///< share of the source's outflow entering the target
  };
  using Graph = boost::adjacency_list<boost::vecS, boost::vecS, boost::bidirectionalS,
                                      boost::no_property, Link>;
  Graph g;
};

ReachGraph::ReachGraph(const ReachTable& table, const SplitRules& rules)
    : table_(&table), links_(new Links{Links::Graph(table.reaches.size())}) {
  REACHWISE_ASSERT(table.reaches.size() < std::numeric_limits<Vertex>::max());
  indexIds();
  addLinks();
  splits_ = resolveSplits(*this, rules);
  useShares();
}

ReachGraph::ReachGraph(ReachGraph&&) noexcept = default;
ReachGraph& ReachGraph::operator=(ReachGraph&&) noexcept = default;
ReachGraph::~ReachGraph() = default;

std::size_t ReachGraph::size() const noexcept { return boost::num_vertices(links_->g); }
std::size_t ReachGraph::linkCount() const noexcept { return boost::num_edges(links_->g); }
std::size_t ReachGraph::upstreamCount(Vertex v) const { return boost::in_degree(v, links_->g); }
std::size_t ReachGraph::downstreamCount(Vertex v) const { return boost::out_degree(v, links_->g); }

void ReachGraph::indexIds() {
  index_.reserve(table_->reaches.size());
  for (Vertex v = 0; v < table_->reaches.size(); ++v) {
    const auto [it, inserted] = index_.emplace(std::string_view(record(v).id), v);
    if (!inserted) duplicates_.push_back(DuplicateId{v, it->second});
  }
}

void ReachGraph::addLinks() {
  for (Vertex v = 0; v < table_->reaches.size(); ++v) {
    const auto& to = record(v).to_reach;
    if (!to) continue;
    for (const auto piece : parseDownstreamIds(*to)) {
      const auto it = index_.find(piece);
      if (it == index_.end())
        unresolved_.push_back(UnresolvedLink{v, std::string(piece)});
      else
        boost::add_edge(v, it->second, links_->g);
    }
  }
}

void ReachGraph::useShares() {
  // A bifurcating reach passes on each branch's share; all others pass on everything.
  for (const auto& b : splits_.bifurcations)
    for (std::size_t k = 0; k < b.branches.size(); ++k)
      links_->g[boost::edge(b.at, b.branches[k], links_->g).first].fraction = b.share[k];
}

const BifurcationShares* ReachGraph::sharesAt(Vertex v) const {
  const auto& all = splits_.bifurcations;
  const auto it = std::lower_bound(all.begin(), all.end(), v,
                                   [](const BifurcationShares& b, Vertex x) { return b.at < x; });
  return it != all.end() && it->at == v ? &*it : nullptr;
}

double ReachGraph::share(Vertex v) const {
  for (const auto u : upstream(v))
    if (downstreamCount(u) >= 2) return fraction(u, v);
  return kNaN;
}

bool ReachGraph::leavesAsSideArm(Vertex from, Vertex to) const {
  const auto* b = sharesAt(from);
  return b && b->branches[b->main] != to;
}

std::optional<ReachGraph::Vertex> ReachGraph::find(std::string_view reach_id) const {
  const auto it = index_.find(reach_id);
  if (it == index_.end()) return std::nullopt;
  return it->second;
}

std::vector<ReachGraph::Vertex> ReachGraph::upstream(Vertex v) const {
  std::vector<Vertex> out;
  for (auto [e, end] = boost::in_edges(v, links_->g); e != end; ++e)
    out.push_back(static_cast<Vertex>(boost::source(*e, links_->g)));
  return out;
}

std::vector<ReachGraph::Vertex> ReachGraph::downstream(Vertex v) const {
  std::vector<Vertex> out;
  for (auto [e, end] = boost::out_edges(v, links_->g); e != end; ++e)
    out.push_back(static_cast<Vertex>(boost::target(*e, links_->g)));
  return out;
}

double ReachGraph::fraction(Vertex from, Vertex to) const {
  const auto [e, found] = boost::edge(from, to, links_->g);
  REACHWISE_ASSERT(found);
  return links_->g[e].fraction;
}

std::vector<ReachGraph::Vertex> ReachGraph::headwaters() const {
  std::vector<Vertex> out;
  for (Vertex v = 0; v < size(); ++v)
    if (upstreamCount(v) == 0) out.push_back(v);
  return out;
}

std::vector<ReachGraph::Vertex> ReachGraph::outlets() const {
  std::vector<Vertex> out;
  for (Vertex v = 0; v < size(); ++v)
    if (downstreamCount(v) == 0) out.push_back(v);
  return out;
}

std::vector<ReachGraph::Vertex> ReachGraph::confluences() const {
  std::vector<Vertex> out;
  for (Vertex v = 0; v < size(); ++v)
    if (upstreamCount(v) >= 2) out.push_back(v);
  return out;
}

std::vector<ReachGraph::Vertex> ReachGraph::bifurcations() const {
  std::vector<Vertex> out;
  for (Vertex v = 0; v < size(); ++v)
    if (downstreamCount(v) >= 2) out.push_back(v);
  return out;
}

std::optional<std::vector<ReachGraph::Vertex>> ReachGraph::topologicalOrder() const {
  // Boost's topological_sort yields reverse order and throws not_a_dag on
  // any back edge, self-loops included.
  std::vector<Vertex> reversed;
  reversed.reserve(size());
  try {
    boost::topological_sort(links_->g, std::back_inserter(reversed));
  } catch (const boost::not_a_dag&) {
    return std::nullopt;
  }
  std::reverse(reversed.begin(), reversed.end());
  return reversed;
}

bool ReachGraph::hasSelfLoop(Vertex v) const { return boost::edge(v, v, links_->g).second; }

std::vector<std::vector<ReachGraph::Vertex>> ReachGraph::cycles() const {
  std::vector<std::uint32_t> component(size());
  const auto count = boost::strong_components(links_->g, component.data());
  std::vector<std::vector<Vertex>> members(count);
  for (Vertex v = 0; v < size(); ++v) members[component[v]].push_back(v);
  std::vector<std::vector<Vertex>> out;
  for (auto& m : members)
    if (m.size() > 1 || (m.size() == 1 && hasSelfLoop(m.front()))) out.push_back(std::move(m));
  std::sort(out.begin(), out.end(),
            [](const auto& a, const auto& b) { return a.front() < b.front(); });
  return out;
}

Components ReachGraph::components() const {
  std::vector<std::uint32_t> rank(size()), parent(size());
  const auto rank_map = boost::make_iterator_property_map(rank.begin(), boost::identity_property_map());
  const auto parent_map =
      boost::make_iterator_property_map(parent.begin(), boost::identity_property_map());
  boost::disjoint_sets<decltype(rank_map), decltype(parent_map)> sets(rank_map, parent_map);
  for (Vertex v = 0; v < size(); ++v) sets.make_set(v);
  for (auto [e, end] = boost::edges(links_->g); e != end; ++e)
    sets.union_set(static_cast<Vertex>(boost::source(*e, links_->g)),
                   static_cast<Vertex>(boost::target(*e, links_->g)));
  // Number basins in order of their lowest record so the numbering is stable.
  constexpr auto kNone = std::numeric_limits<std::uint32_t>::max();
  std::vector<std::uint32_t> number(size(), kNone);
  Components out;
  out.basin.resize(size());
  for (Vertex v = 0; v < size(); ++v) {
    auto& n = number[sets.find_set(v)];
    if (n == kNone) n = out.count++;
    out.basin[v] = n;
  }
  return out;
}

bool ReachGraph::flipped(Vertex v) const {
  const auto& line = record(v).line;
  if (line.size() < 2) return false;
  if (const auto down = downstream(v); !down.empty()) {
    const auto& next = record(down.front()).line;
    return toNearerEnd(line.front(), next) < toNearerEnd(line.back(), next);
  }
  if (const auto up = upstream(v); !up.empty()) {
    const auto& prev = record(up.front()).line;
    return toNearerEnd(line.back(), prev) < toNearerEnd(line.front(), prev);
  }
  return false;
}

Point2 ReachGraph::top(Vertex v) const {
  const auto& line = record(v).line;
  if (line.empty()) return Point2{kNaN, kNaN};
  return flat(flipped(v) ? line.back() : line.front());
}

Point2 ReachGraph::bottom(Vertex v) const {
  const auto& line = record(v).line;
  if (line.empty()) return Point2{kNaN, kNaN};
  return flat(flipped(v) ? line.front() : line.back());
}

double ReachGraph::lengthM(Vertex v) const {
  const auto& r = record(v);
  return std::isnan(r.length_m) ? r.geometry_length_m : r.length_m;
}

}  // namespace reachwise::network
