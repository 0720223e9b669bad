#include "reachwise/network/Splits.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>
#include <string_view>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

namespace {

using Vertex = ReachGraph::Vertex;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

[[noreturn]] void refuse(const SplitRules& rules, const std::string& key, const std::string& message) {
  InputLocation where;
  where.file = rules.origin;
  where.field = key;
  throw InputError(where, message);
}

/// Bottom width, or the diameter of a pipe; NaN when not given.
double channelWidth(const ReachRecord& r) {
  return r.section.shape == hydraulics::Shape::Circle ? r.section.diameter_m : r.section.bottom_width_m;
}

std::string listBranches(const ReachGraph& graph, const std::vector<Vertex>& branches) {
  std::string out;
  for (const auto b : branches) out += (out.empty() ? "" : ", ") + graph.id(b);
  return out;
}

/// Applies `o` to the bifurcation it names, after checking it against the graph.
void applyOverride(const ReachGraph& graph, const SplitRules& rules, const SplitOverride& o,
                   std::vector<BifurcationShares>& bifurcations) {
  const auto at = graph.find(o.at);
  if (!at) refuse(rules, o.key + ".at", fmt::format("\"{}\" is not a reach of the layer", o.at));
  const auto it = std::lower_bound(bifurcations.begin(), bifurcations.end(), *at,
                                   [](const BifurcationShares& b, Vertex v) { return b.at < v; });
  if (it == bifurcations.end() || it->at != *at)
    refuse(rules, o.key + ".at",
           fmt::format("reach {} is not a bifurcation: it flows into {} reach{}, not several", o.at,
                       graph.downstreamCount(*at), graph.downstreamCount(*at) == 1 ? "" : "es"));
  BifurcationShares& b = *it;
  std::vector<double> share(b.branches.size(), kNaN);
  double sum = 0;
  for (const auto& [id, value] : o.shares) {
    const std::string key = o.key + ".shares." + id;
    const auto v = graph.find(id);
    const auto pos = v ? std::find(b.branches.begin(), b.branches.end(), *v) : b.branches.end();
    if (pos == b.branches.end())
      refuse(rules, key,
             fmt::format("\"{}\" is not a branch of the bifurcation below reach {} (its branches: {})",
                         id, o.at, listBranches(graph, b.branches)));
    if (!(value >= 0) || !std::isfinite(value))
      refuse(rules, key, fmt::format("a share must be zero or positive, got {}", value));
    share[static_cast<std::size_t>(pos - b.branches.begin())] = value;
    sum += value;
  }
  for (std::size_t k = 0; k < share.size(); ++k)
    if (std::isnan(share[k]))
      refuse(rules, o.key + ".shares",
             fmt::format("no share for branch {} of the bifurcation below reach {} (every branch needs one)",
                         graph.id(b.branches[k]), o.at));
  if (std::abs(sum - 1.0) > kSplitSumTolerance)
    refuse(rules, o.key + ".shares",
           fmt::format("the shares below reach {} sum to {}, not 1", o.at, sum));
  b.share = std::move(share);
  b.source = ShareSource::Override;
}

/// Shares from the branches' fields, else from the default rule.
void fromFieldsOrDefault(const ReachGraph& graph, DefaultSplit fallback, BifurcationShares& b) {
  std::size_t given = 0;
  for (const auto v : b.branches) given += !std::isnan(graph.record(v).split);
  if (given == b.branches.size()) {
    for (const auto v : b.branches) b.share.push_back(graph.record(v).split);
    b.source = ShareSource::Field;
    return;
  }
  b.share.assign(b.branches.size(), kNaN);
  b.source = ShareSource::Missing;
  if (given > 0 || fallback == DefaultSplit::None) {
    for (std::size_t k = 0; k < b.branches.size(); ++k) b.share[k] = graph.record(b.branches[k]).split;
    return;
  }
  double total = 0;
  bool widths = fallback == DefaultSplit::Width;
  for (const auto v : b.branches) {
    const double w = channelWidth(graph.record(v));
    if (!(w > 0) || !std::isfinite(w)) widths = false;
    total += w;
  }
  for (std::size_t k = 0; k < b.branches.size(); ++k)
    b.share[k] = widths ? channelWidth(graph.record(b.branches[k])) / total
                        : 1.0 / static_cast<double>(b.branches.size());
  b.source = widths ? ShareSource::Width : ShareSource::Equal;
}

/// The largest share; ties: the widest channel, then the lowest id.
std::size_t mainBranch(const ReachGraph& graph, const BifurcationShares& b) {
  const auto key = [&](std::size_t k) {
    const double s = b.share[k], w = channelWidth(graph.record(b.branches[k]));
    return std::pair{std::isnan(s) ? -1.0 : s, std::isnan(w) ? -1.0 : w};
  };
  std::size_t best = 0;
  for (std::size_t k = 1; k < b.branches.size(); ++k) {
    const auto a = key(k), m = key(best);
    if (a > m || (a == m && graph.id(b.branches[k]) < graph.id(b.branches[best]))) best = k;
  }
  return best;
}

/// Marks the pieces of cut lines whose `split` belongs to a sibling piece
/// that is a branch (same line, same value).
std::vector<bool> pieceSplits(const ReachGraph& graph, const std::vector<BifurcationShares>& bifurcations) {
  std::vector<bool> branch(graph.size(), false), out(graph.size(), false);
  for (const auto& b : bifurcations)
    for (const auto v : b.branches) branch[v] = true;
  std::set<std::pair<std::string_view, double>> branch_pieces;
  for (Vertex v = 0; v < graph.size(); ++v) {
    const std::string_view line = graph.record(v).line_id;
    if (branch[v] && !line.empty() && !std::isnan(graph.record(v).split))
      branch_pieces.emplace(line, graph.record(v).split);
  }
  if (branch_pieces.empty()) return out;
  for (Vertex v = 0; v < graph.size(); ++v) {
    const std::string_view line = graph.record(v).line_id;
    out[v] = !branch[v] && !line.empty() && branch_pieces.count({line, graph.record(v).split}) > 0;
  }
  return out;
}

}  // namespace

const char* defaultSplitName(DefaultSplit rule) {
  switch (rule) {
    case DefaultSplit::Width: return "width";
    case DefaultSplit::Equal: return "equal";
    case DefaultSplit::None: return "none";
  }
  return "width";
}

SplitResolution resolveSplits(const ReachGraph& graph, const SplitRules& rules) {
  SplitResolution out;
  out.fallback = rules.fallback;
  for (const auto v : graph.bifurcations()) {
    BifurcationShares b;
    b.at = v;
    b.branches = graph.downstream(v);
    out.bifurcations.push_back(std::move(b));
  }
  std::set<Vertex> overridden;
  for (const auto& o : rules.overrides) {
    applyOverride(graph, rules, o, out.bifurcations);
    if (!overridden.insert(*graph.find(o.at)).second)
      refuse(rules, o.key + ".at", fmt::format("reach {} has a split table already", o.at));
  }
  for (auto& b : out.bifurcations) {
    if (b.source != ShareSource::Override) fromFieldsOrDefault(graph, rules.fallback, b);
    b.main = mainBranch(graph, b);
  }
  out.piece_split = pieceSplits(graph, out.bifurcations);
  return out;
}

}  // namespace reachwise::network
