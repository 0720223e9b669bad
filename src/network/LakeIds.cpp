// Reaches that name the lake they flow into (`lake_id` on the reach layer):
// linkNamedLakes, kept apart from the geometric linkLakes (Lakes.cpp).
#include <fmt/format.h>

#include <algorithm>
#include <map>
#include <unordered_map>

#include "reachwise/Error.hpp"
#include "reachwise/network/Lakes.hpp"

namespace reachwise::network {

namespace {

bool has(const std::vector<std::uint32_t>& v, std::uint32_t x) { return std::find(v.begin(), v.end(), x) != v.end(); }

bool erase(std::vector<std::uint32_t>& v, std::uint32_t x) {
  const auto it = std::find(v.begin(), v.end(), x);
  if (it == v.end()) return false;
  v.erase(it);
  return true;
}

std::string idList(const NetworkPlan& plan, const std::vector<std::uint32_t>& reaches) {
  if (reaches.empty()) return "no reach";
  std::string out;
  for (const auto r : reaches) out += (out.empty() ? "" : ", ") + plan.reach_id[r];
  return out;
}

}  // namespace

void linkNamedLakes(const NetworkPlan& plan, const ReachTable& table, const LakeTable& lakes,
                    const LakeIdFields& fields, std::vector<LakeLinks>& links, ProblemList& problems) {
  REACHWISE_ASSERT(links.size() == lakes.lakes.size());
  std::unordered_map<std::string_view, std::size_t> lake_index;
  for (std::size_t l = 0; l < lakes.lakes.size(); ++l) lake_index.emplace(lakes.lakes[l].lake_id, l);
  // A cut line's pieces copy its fields: only its last piece flows into the lake.
  std::map<std::string, std::uint32_t, std::less<>> last_piece;
  for (const auto& r : table.reaches)
    if (!r.line_id.empty()) last_piece[r.line_id] = std::max(last_piece[r.line_id], r.piece);

  const auto where = [&](std::uint32_t i, const std::string& field) {
    const ReachRecord& rec = table.reaches[plan.record[i]];
    InputLocation at;
    at.file = table.source;
    at.layer = table.layer;
    at.fid = rec.fid;
    at.reach_id = rec.id;
    at.field = field;
    return at;
  };

  std::vector<std::vector<std::uint32_t>> named(lakes.lakes.size());
  bool any = false;
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    const ReachRecord& rec = table.reaches[plan.record[i]];
    if (rec.lake_id.empty()) continue;
    if (!rec.line_id.empty() && rec.piece != last_piece[rec.line_id]) continue;
    const auto it = lake_index.find(rec.lake_id);
    if (it == lake_index.end())
      throw InputError(where(i, fields.lake_id),
                       fmt::format("names lake \"{}\", which is not in the lakes layer {} of {}", rec.lake_id,
                                   lakes.layer, lakes.source));
    named[it->second].push_back(i);
    any = true;
  }
  if (!any) return;

  std::vector<bool> changed(lakes.lakes.size(), false);
  for (std::size_t l = 0; l < named.size(); ++l)
    for (const auto i : named[l]) {
      if (has(links[l].inside, i)) continue;  // both ends on its own lake: dropped as a piece of it
      for (std::size_t m = 0; m < links.size(); ++m) {
        if (m == l) continue;
        if (has(links[m].inside, i))
          throw InputError(where(i, fields.lake_id),
                           fmt::format("names lake {}, but lies inside lake {}", lakes.lakes[l].lake_id,
                                       lakes.lakes[m].lake_id));
        if (erase(links[m].inflow, i)) changed[m] = true;
      }
      if (erase(links[l].outflow, i)) changed[l] = true;
      if (!has(links[l].inflow, i)) {
        links[l].inflow.push_back(i);
        std::sort(links[l].inflow.begin(), links[l].inflow.end());
        changed[l] = true;
      }
    }

  // Where the naming reaches flow: the lake's outflowing reaches when
  // geometry found none, else a check against them.
  for (std::size_t l = 0; l < named.size(); ++l) {
    if (named[l].empty()) continue;
    auto& lake = links[l];
    const bool from_ids = lake.outflow.empty();
    std::vector<std::uint32_t> first;
    std::uint32_t first_reach = 0;
    bool have_first = false;
    for (const auto i : named[l]) {
      if (has(lake.inside, i)) continue;
      std::vector<std::uint32_t> to;
      for (auto k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k)
        if (!has(lake.inside, plan.down_reach[k])) to.push_back(plan.down_reach[k]);
      std::sort(to.begin(), to.end());
      if (from_ids) {
        if (!have_first) {
          first = to;
          first_reach = i;
          have_first = true;
        } else if (to != first) {
          throw InputError(where(i, fields.to_reach),
                           fmt::format("names lake {} like reach {}, but flows into {} where {} flows into {}; the "
                                       "reaches naming a lake must flow into the same reaches, the lake's outflowing "
                                       "reaches (none: a terminal lake)",
                                       lakes.lakes[l].lake_id, plan.reach_id[first_reach], idList(plan, to),
                                       plan.reach_id[first_reach], idList(plan, first)));
        }
      } else {
        for (const auto d : to)
          if (!has(lake.outflow, d))
            throw InputError(where(i, fields.to_reach),
                             fmt::format("names lake {}, but flows into reach {}, which does not leave the lake (its "
                                         "outflowing reaches: {})",
                                         lakes.lakes[l].lake_id, plan.reach_id[d], idList(plan, lake.outflow)));
      }
    }
    if (from_ids && !first.empty()) {
      lake.outflow = first;
      changed[l] = true;
    }
  }

  for (std::size_t l = 0; l < changed.size(); ++l) {
    if (!changed[l]) continue;
    const auto& lake = lakes.lakes[l];
    std::erase_if(problems, [&](const Problem& p) {
      return (p.code == ProblemCode::TerminalLake || p.code == ProblemCode::LakeWithoutInflow) && p.fid == lake.fid &&
             p.reach_id.empty();
    });
    reportLakeEnds(lake, links[l], problems);
  }
}

}  // namespace reachwise::network
