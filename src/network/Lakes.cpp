#include "reachwise/network/Lakes.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/network/LakeIndex.hpp"

namespace reachwise::network {

double LakeRecord::emptyLevel() const {
  // A prismatic weir lake's storage counts from its crest (only water above
  // the crest leaves); other lakes from `bottom_level_m` or the table.
  if (!storage_level_m.empty()) return storage_level_m.front();
  return rule.kind == routing::OutflowRule::Kind::Weir ? rule.crest_level_m : bottom_level_m;
}

routing::LevelPool LakeRecord::levelPool() const {
  auto storage = storage_level_m.empty() ? routing::LevelStorage::prismatic(area_m2, emptyLevel())
                                         : routing::LevelStorage::table(storage_level_m, storage_m3);
  return routing::LevelPool(std::move(storage), rule, "lake " + lake_id);
}

bool insideRings(const std::vector<std::vector<Point2>>& rings, Point2 p) {
  bool inside = false;
  for (const auto& ring : rings) {
    const std::size_t n = ring.size();
    for (std::size_t i = 0, j = n ? n - 1 : 0; i < n; j = i++) {
      const Point2 a = ring[i], b = ring[j];
      if ((a.y > p.y) != (b.y > p.y)) {
        const double x = a.x + (p.y - a.y) / (b.y - a.y) * (b.x - a.x);
        if (p.x < x) inside = !inside;
      }
    }
  }
  return inside;
}

double distanceToRings(const std::vector<std::vector<Point2>>& rings, Point2 p) {
  double best = std::numeric_limits<double>::infinity();
  for (const auto& ring : rings) {
    const std::size_t n = ring.size();
    for (std::size_t i = 0; i < n; ++i) {
      const Point2 a = ring[i], b = ring[(i + 1) % n];
      const double dx = b.x - a.x, dy = b.y - a.y, len2 = dx * dx + dy * dy;
      double t = len2 > 0 ? ((p.x - a.x) * dx + (p.y - a.y) * dy) / len2 : 0.0;
      t = std::clamp(t, 0.0, 1.0);
      best = std::min(best, std::hypot(p.x - (a.x + t * dx), p.y - (a.y + t * dy)));
    }
  }
  return best;
}

namespace {

/// The first lake (table order) an end lies on, or -1; `all` gets every
/// lake it lies on, in table order (a grid query, network/LakeIndex.hpp).
long lakeAt(const LakeIndex& index, Point2 p, std::vector<std::size_t>& all) {
  index.lakesAt(p, all);
  return all.empty() ? -1 : static_cast<long>(all.front());
}

Problem placed(ProblemCode code, std::string message, Point2 at, const std::string& reach = {},
               std::int64_t fid = -1) {
  Problem p(code, std::move(message));
  p.x = at.x;
  p.y = at.y;
  p.reach_id = reach;
  p.fid = fid;
  return p;
}

}  // namespace

std::vector<LakeLinks> linkLakes(const NetworkPlan& plan, const LakeTable& lakes, double tolerance,
                                 ProblemList& problems) {
  std::vector<LakeLinks> links(lakes.lakes.size());
  const LakeIndex index(lakes, tolerance);
  std::vector<std::size_t> at_top, at_bottom;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const auto r = static_cast<std::uint32_t>(i);
    const std::int64_t fid = i < plan.fid.size() ? plan.fid[i] : -1;
    const long top = lakeAt(index, plan.top[i], at_top);
    const long bottom = lakeAt(index, plan.bottom[i], at_bottom);
    const auto overlap = [&](const std::vector<std::size_t>& all, Point2 p, const char* end) {
      if (all.size() < 2) return;
      std::string names;
      for (std::size_t l : all) names += (names.empty() ? "" : ", ") + lakes.lakes[l].lake_id;
      problems.push_back(placed(ProblemCode::LakeOverlap,
                                fmt::format("the {} end of reach {} lies on several lakes ({}); lake {} is taken",
                                            end, plan.reach_id[i], names, lakes.lakes[all.front()].lake_id),
                                p, plan.reach_id[i], fid));
    };
    overlap(at_top, plan.top[i], "upstream");
    overlap(at_bottom, plan.bottom[i], "downstream");
    if (top >= 0 && top == bottom) {
      links[static_cast<std::size_t>(top)].inside.push_back(r);
      problems.push_back(placed(ProblemCode::LakePiece,
                                fmt::format("reach {} lies inside lake {}; it is dropped when the lake is routed",
                                            plan.reach_id[i], lakes.lakes[static_cast<std::size_t>(top)].lake_id),
                                plan.top[i], plan.reach_id[i], fid));
      continue;
    }
    if (bottom >= 0) links[static_cast<std::size_t>(bottom)].inflow.push_back(r);
    if (top >= 0) links[static_cast<std::size_t>(top)].outflow.push_back(r);
  }
  for (std::size_t l = 0; l < links.size(); ++l) reportLakeEnds(lakes.lakes[l], links[l], problems);
  return links;
}

void reportLakeEnds(const LakeRecord& lake, const LakeLinks& links, ProblemList& problems) {
  const Point2 at = !lake.rings.empty() && !lake.rings.front().empty()
                        ? lake.rings.front().front()
                        : Point2{std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::quiet_NaN()};
  if (links.outflow.empty()) {
    const char* how = lake.rule.kind == routing::OutflowRule::Kind::Weir ? "spills over its weir"
                                                                         : "lets out by its outflow rule";
    problems.push_back(placed(ProblemCode::TerminalLake,
                              fmt::format("lake {} has no outflowing reach: a terminal sink; it is routed on "
                                          "what flows in, and what it {} leaves the network",
                                          lake.lake_id, how),
                              at, {}, lake.fid));
  }
  if (links.inflow.empty())
    problems.push_back(placed(ProblemCode::LakeWithoutInflow, fmt::format("no reach flows into lake {}", lake.lake_id),
                              at, {}, lake.fid));
}

}  // namespace reachwise::network
