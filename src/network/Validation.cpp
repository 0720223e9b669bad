#include "reachwise/network/Validation.hpp"

#include <fmt/format.h>

#include <cmath>
#include <set>
#include <string_view>
#include <tuple>

#include "reachwise/network/ReachProblem.hpp"

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

Problem at(const ReachGraph& graph, Vertex v, Point2 where, ProblemCode code,
           std::string message) {
  return reachProblem(code, graph.record(v), where.x, where.y, std::move(message));
}

// ---- attributes: the range of each value a record holds (the reader
//      reports values it cannot read; NaN means not given and passes) ----

/// Manning's n and bed slope above this are reported as implausible
/// (common practice: natural channels and floodplains stay well below).
constexpr double kImplausibleN = 0.3;
constexpr double kImplausibleSlope = 0.3;

/// Reports `value` outside its range; true when it is in range or not given.
bool inRange(const ReachRecord& r, double value, bool ok, std::string_view what,
             std::string_view rule, ProblemList& out) {
  if (std::isnan(value) || ok) return true;
  out.push_back(reachProblem(ProblemCode::InvalidAttribute, r,
                             fmt::format("{} must be {}, got {}", what, rule, value)));
  return false;
}

void checkRoughness(const ReachRecord& r, double n, std::string_view what, ProblemList& out) {
  if (inRange(r, n, n > 0, what, "> 0", out) && n > kImplausibleN)
    out.push_back(reachProblem(ProblemCode::ImplausibleAttribute, r,
                               fmt::format("{} {} is above {}", what, n, kImplausibleN)));
}

void checkSection(const ReachRecord& r, ProblemList& out) {
  const auto& sec = r.section;
  checkRoughness(r, sec.manning_n, "manning_n", out);
  if (sec.shape == hydraulics::Shape::Circle) {
    inRange(r, sec.diameter_m, sec.diameter_m > 0, "diameter", "> 0", out);
    return;
  }
  inRange(r, sec.bottom_width_m, sec.bottom_width_m >= 0, "bottom_width", ">= 0", out);
  inRange(r, sec.side_slope, sec.side_slope >= 0, "side_slope", ">= 0", out);
  if (sec.bottom_width_m == 0 && sec.side_slope == 0)
    out.push_back(reachProblem(ProblemCode::InvalidAttribute, r,
                               "bottom_width and side_slope are both 0 (no channel)"));
  if (sec.shape != hydraulics::Shape::TwoStage) return;
  inRange(r, sec.bank_depth_m, sec.bank_depth_m > 0, "bank_depth", "> 0", out);
  inRange(r, sec.floodplain_width_m, sec.floodplain_width_m > 0, "floodplain_width", "> 0", out);
  checkRoughness(r, sec.floodplain_n, "floodplain_n", out);
}

void checkAttributes(const ReachGraph& graph, ProblemList& out) {
  for (Vertex v = 0; v < graph.size(); ++v) {
    const ReachRecord& r = graph.record(v);
    if (r.id.find_first_of(";,") != std::string::npos)
      out.push_back(reachProblem(ProblemCode::InvalidAttribute, r,
                                 "reach ids must not contain ';' or ',' (they separate the "
                                 "branches of a bifurcation in to_reach)"));
    checkSection(r, out);
    const double slope = r.section.bed_slope;
    if (inRange(r, slope, slope > 0, "bed slope", "> 0", out) && slope > kImplausibleSlope)
      out.push_back(reachProblem(ProblemCode::ImplausibleAttribute, r,
                                 fmt::format("bed slope {} is steeper than {}", slope,
                                             kImplausibleSlope)));
    inRange(r, r.muskingum_k_h, r.muskingum_k_h > 0, "muskingum_k_h", "> 0", out);
    inRange(r, r.muskingum_x, r.muskingum_x >= 0 && r.muskingum_x <= 0.5, "muskingum_x",
            "within [0, 0.5]", out);
    inRange(r, r.split, r.split >= 0 && r.split <= 1, "split", "within [0, 1]", out);
    inRange(r, r.base_flow_m3s, r.base_flow_m3s >= 0, "base_flow", ">= 0", out);
  }
}

// ---- the graph ----

void checkIds(const ReachGraph& graph, ProblemList& out) {
  for (const auto& d : graph.duplicateIds())
    out.push_back(at(graph, d.reach, graph.bottom(d.reach), ProblemCode::DuplicateId,
                     fmt::format("Reach id {} is used again; feature {} has it first.",
                                 graph.id(d.reach), graph.record(d.first).fid)));
  for (const auto& u : graph.unresolvedLinks())
    out.push_back(at(graph, u.reach, graph.bottom(u.reach), ProblemCode::UnknownToReach,
                     fmt::format("Reach {} drains to \"{}\", which is not a reach in this layer.",
                                 graph.id(u.reach), u.to_reach)));
}

void checkLengths(const ReachGraph& graph, ProblemList& out) {
  for (Vertex v = 0; v < graph.size(); ++v) {
    const double length_m = graph.lengthM(v);
    if (length_m > 0 && std::isfinite(length_m)) continue;
    if (length_m > 0 || std::isnan(length_m))  // infinite (coordinates or a field too large), or NaN
      out.push_back(at(graph, v, graph.top(v), ProblemCode::NonFiniteLength,
                       fmt::format("Reach {} has length {} m; a reach needs a finite length.", graph.id(v),
                                   length_m)));
    else
      out.push_back(at(graph, v, graph.top(v), ProblemCode::ZeroLength,
                       fmt::format("Reach {} has length {} m; a reach needs a positive length.",
                                   graph.id(v), length_m)));
  }
}

void checkCycles(const ReachGraph& graph, ProblemList& out) {
  for (const auto& cycle : graph.cycles()) {
    const auto first = cycle.front();
    if (cycle.size() == 1) {
      out.push_back(at(graph, first, graph.bottom(first), ProblemCode::SelfLoop,
                       fmt::format("Reach {} names itself as its downstream reach.",
                                   graph.id(first))));
    } else {
      out.push_back(at(graph, first, graph.bottom(first), ProblemCode::Cycle,
                       fmt::format("Reaches {} form a cycle, so water would never leave them.",
                                   listIds(graph, cycle))));
    }
  }
}

std::string listShares(const ReachGraph& graph, const BifurcationShares& b) {
  std::string out;
  for (std::size_t k = 0; k < b.branches.size(); ++k)
    out += fmt::format("{}{} {:.4g}", k ? ", " : "", graph.id(b.branches[k]), b.share[k]);
  return out;
}

/// The branches of `b` that have a share (given), or have none.
std::vector<Vertex> branchesWith(const BifurcationShares& b, bool given) {
  std::vector<Vertex> out;
  for (std::size_t k = 0; k < b.branches.size(); ++k)
    if (std::isnan(b.share[k]) != given) out.push_back(b.branches[k]);
  return out;
}

void reportMissing(const ReachGraph& graph, const BifurcationShares& b, ProblemList& out) {
  const auto given = branchesWith(b, true);
  const std::string why =
      given.empty() ? std::string("no branch has one and default_split is \"none\"")
                    : fmt::format("while {} ha{} one: give every branch a split, or none to use default_split",
                                  listIds(graph, given), given.size() == 1 ? "s" : "ve");
  for (const auto v : branchesWith(b, false))
    out.push_back(at(graph, v, graph.top(v), ProblemCode::BifurcationSplitMissing,
                     fmt::format("Reach {} is a branch of the bifurcation below reach {} but has no "
                                 "split value ({}).",
                                 graph.id(v), graph.id(b.at), why)));
}

void checkBifurcation(const ReachGraph& graph, const BifurcationShares& b, ProblemList& out) {
  const Vertex v = b.at;
  switch (b.source) {
    case ShareSource::Missing:
      reportMissing(graph, b, out);
      return;
    case ShareSource::Width:
    case ShareSource::Equal:
    {
      const DefaultSplit rule = graph.splits().fallback;
      const bool width = b.source == ShareSource::Width;
      out.push_back(at(graph, v, graph.bottom(v), ProblemCode::SplitAssumed,
                       fmt::format("No branch of the bifurcation below reach {} has a split value; "
                                   "{} (default_split = \"{}\"{}): {}.",
                                   graph.id(v), width ? "shares by bottom width" : "equal shares",
                                   defaultSplitName(rule),
                                   !width && rule == DefaultSplit::Width
                                       ? ", but a branch has no bottom width"
                                       : "",
                                   listShares(graph, b))));
      return;
    }
    case ShareSource::Override:
    case ShareSource::Field:
      break;
  }
  double sum = 0;
  bool complete = true;
  for (std::size_t k = 0; k < b.branches.size(); ++k) {
    const double split = b.share[k];
    if (!(split >= 0 && split <= 1)) {
      complete = false;
      out.push_back(at(graph, b.branches[k], graph.top(b.branches[k]), ProblemCode::BifurcationSplitRange,
                       fmt::format("Reach {} has split {}, outside 0 to 1.", graph.id(b.branches[k]), split)));
    }
    sum += split;
  }
  if (complete && std::abs(sum - 1.0) > kSplitSumTolerance)
    out.push_back(at(graph, v, graph.bottom(v), ProblemCode::BifurcationSplitSum,
                     fmt::format("The splits of the branches below reach {} ({}) sum to {}, "
                                 "not 1.",
                                 graph.id(v), listShares(graph, b), sum)));
}

bool isBranch(const ReachGraph& graph, Vertex v) {
  for (const auto u : graph.upstream(v))
    if (graph.downstreamCount(u) >= 2) return true;
  return false;
}

void checkSplits(const ReachGraph& graph, ProblemList& out) {
  for (const auto& b : graph.splits().bifurcations) checkBifurcation(graph, b, out);
  for (Vertex v = 0; v < graph.size(); ++v) {
    if (std::isnan(graph.record(v).split) || isBranch(graph, v) || graph.splits().piece_split[v]) continue;
    out.push_back(at(graph, v, graph.top(v), ProblemCode::SplitUnused,
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
    out.push_back(at(graph, where, graph.bottom(where), ProblemCode::Basin,
                     fmt::format("Basin {} (of {}, numbered from 0 as the results' `basin` field): {} reach{}, {}.", b, comps.count, reaches[b],
                                 reaches[b] == 1 ? "" : "es", drains)));
  }
}

}  // namespace

ProblemList validate(const ReachGraph& graph) {
  ProblemList out;
  checkAttributes(graph, out);
  checkIds(graph, out);
  checkLengths(graph, out);
  checkCycles(graph, out);
  checkSplits(graph, out);
  reportBasins(graph, out);
  return out;
}

void mergeProblems(ProblemList& into, const ProblemList& more) {
  using Key = std::tuple<ProblemCode, std::int64_t, std::string_view, std::string_view>;
  const auto key = [](const Problem& p) {
    return Key{p.code, p.fid, p.reach_id,
               kindOf(p.code).per_attribute ? std::string_view(p.message) : std::string_view()};
  };
  // Keys view the problems' strings: no reallocation of `into` after this.
  into.reserve(into.size() + more.size());
  std::set<Key> seen;
  for (const auto& p : into) seen.insert(key(p));
  for (const auto& p : more)
    if (seen.insert(key(p)).second) into.push_back(p);
}

}  // namespace reachwise::network
