#include "reachwise/network/Validation.hpp"

#include <fmt/format.h>

#include <cmath>
#include <set>
#include <tuple>

namespace reachwise::network {

namespace {

using Vertex = ReachGraph::Vertex;

/// At most this many ids are spelled out in one message.
constexpr std::size_t kListedIds = 20;

std::string listIds(const ReachGraph& graph, const std::vector<Vertex>& reaches) {
  std::string out;
  for (std::size_t i = 0; i < reaches.size() && i < kListedIds; ++i)
    out += (i ? ", " : "") + graph.id(reaches[i]);
  if (reaches.size() > kListedIds) out += fmt::format(" and {} more", reaches.size() - kListedIds);
  return out;
}

Problem at(const ReachGraph& graph, Vertex v, Point2 where, std::string code, Severity severity,
           std::string message) {
  Problem p;
  p.code = std::move(code);
  p.severity = severity;
  p.fid = graph.record(v).fid;
  p.reach_id = graph.id(v);
  p.x = where.x;
  p.y = where.y;
  p.message = std::move(message);
  return p;
}

void checkIds(const ReachGraph& graph, ProblemList& out) {
  for (const auto& d : graph.duplicateIds())
    out.push_back(at(graph, d.reach, graph.bottom(d.reach), "duplicate_id", Severity::Error,
                     fmt::format("Reach id {} is used again; feature {} has it first.",
                                 graph.id(d.reach), graph.record(d.first).fid)));
  for (const auto& u : graph.unresolvedLinks())
    out.push_back(at(graph, u.reach, graph.bottom(u.reach), "unknown_to_reach", Severity::Error,
                     fmt::format("Reach {} drains to \"{}\", which is not a reach in this layer.",
                                 graph.id(u.reach), u.to_reach)));
}

void checkLengths(const ReachGraph& graph, ProblemList& out) {
  for (Vertex v = 0; v < graph.size(); ++v) {
    const double length_m = graph.lengthM(v);
    if (length_m > 0 && std::isfinite(length_m)) continue;
    out.push_back(at(graph, v, graph.top(v), "zero_length", Severity::Error,
                     fmt::format("Reach {} has length {} m; a reach needs a positive length.",
                                 graph.id(v), length_m)));
  }
}

void checkCycles(const ReachGraph& graph, ProblemList& out) {
  for (const auto& cycle : graph.cycles()) {
    const auto first = cycle.front();
    if (cycle.size() == 1) {
      out.push_back(at(graph, first, graph.bottom(first), "self_loop", Severity::Error,
                       fmt::format("Reach {} names itself as its downstream reach.",
                                   graph.id(first))));
    } else {
      out.push_back(at(graph, first, graph.bottom(first), "cycle", Severity::Error,
                       fmt::format("Reaches {} form a cycle, so water would never leave them.",
                                   listIds(graph, cycle))));
    }
  }
}

void checkBifurcation(const ReachGraph& graph, Vertex v, ProblemList& out) {
  const auto branches = graph.downstream(v);
  double sum = 0;
  bool complete = true;
  std::string shares;
  for (const auto b : branches) {
    const double split = graph.record(b).split;
    if (std::isnan(split)) {
      complete = false;
      out.push_back(at(graph, b, graph.top(b), "bifurcation_split_missing", Severity::Error,
                       fmt::format("Reach {} is a branch of the bifurcation below reach {} "
                                   "but has no split value.",
                                   graph.id(b), graph.id(v))));
      continue;
    }
    if (!(split >= 0 && split <= 1)) {
      complete = false;
      out.push_back(at(graph, b, graph.top(b), "bifurcation_split_range", Severity::Error,
                       fmt::format("Reach {} has split {}, outside 0 to 1.", graph.id(b), split)));
    }
    sum += split;
    shares += fmt::format("{}{} {}", shares.empty() ? "" : ", ", graph.id(b), split);
  }
  if (complete && std::abs(sum - 1.0) > kSplitSumTolerance)
    out.push_back(at(graph, v, graph.bottom(v), "bifurcation_split_sum", Severity::Error,
                     fmt::format("The splits of the branches below reach {} ({}) sum to {}, "
                                 "not 1.",
                                 graph.id(v), shares, sum)));
}

bool isBranch(const ReachGraph& graph, Vertex v) {
  for (const auto u : graph.upstream(v))
    if (graph.downstreamCount(u) >= 2) return true;
  return false;
}

void checkSplits(const ReachGraph& graph, ProblemList& out) {
  for (const auto v : graph.bifurcations()) checkBifurcation(graph, v, out);
  for (Vertex v = 0; v < graph.size(); ++v) {
    if (std::isnan(graph.record(v).split) || isBranch(graph, v)) continue;
    out.push_back(at(graph, v, graph.top(v), "split_unused", Severity::Warning,
                     fmt::format("Reach {} has a split value but is not a branch of a "
                                 "bifurcation; it is ignored.",
                                 graph.id(v))));
  }
}

void reportBasins(const ReachGraph& graph, ProblemList& out) {
  const auto comps = graph.components();
  if (comps.count < 2) return;
  std::vector<std::size_t> reaches(comps.count, 0);
  std::vector<std::vector<Vertex>> outlets(comps.count);
  std::vector<Vertex> lowest(comps.count, 0);
  for (Vertex v = 0; v < graph.size(); ++v) {
    const auto b = comps.basin[v];
    if (reaches[b]++ == 0) lowest[b] = v;
    if (graph.downstreamCount(v) == 0) outlets[b].push_back(v);
  }
  for (std::uint32_t b = 0; b < comps.count; ++b) {
    const auto& o = outlets[b];
    const auto where = o.empty() ? lowest[b] : o.front();
    const auto drains =
        o.empty() ? std::string("no outlet (it contains a cycle)")
                  : fmt::format("outlet{} {}", o.size() > 1 ? "s" : "", listIds(graph, o));
    out.push_back(at(graph, where, graph.bottom(where), "basin", Severity::Info,
                     fmt::format("Basin {} of {}: {} reach{}, {}.", b + 1, comps.count, reaches[b],
                                 reaches[b] == 1 ? "" : "es", drains)));
  }
}

}  // namespace

ProblemList validate(const ReachGraph& graph) {
  ProblemList out;
  checkIds(graph, out);
  checkLengths(graph, out);
  checkCycles(graph, out);
  checkSplits(graph, out);
  reportBasins(graph, out);
  return out;
}

void mergeProblems(ProblemList& into, const ProblemList& more) {
  using Key = std::tuple<std::string, std::int64_t, std::string>;
  std::set<Key> seen;
  for (const auto& p : into) seen.emplace(p.code, p.fid, p.reach_id);
  for (const auto& p : more)
    if (seen.emplace(p.code, p.fid, p.reach_id).second) into.push_back(p);
}

}  // namespace reachwise::network
