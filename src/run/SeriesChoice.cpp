#include "reachwise/run/SeriesChoice.hpp"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <cctype>
#include <algorithm>
#include <map>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/network/PlanRanking.hpp"

namespace reachwise::run {

namespace {

bool flowsIntoConfluence(const network::NetworkPlan& plan, std::uint32_t i) {
  for (std::uint32_t k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k) {
    const std::uint32_t d = plan.down_reach[k];
    if (plan.up_offset[d + 1] - plan.up_offset[d] >= 2) return true;
  }
  return false;
}

/// The incoming branches of the `limit` confluences with the largest
/// upstream networks.
std::vector<bool> mainConfluenceBranches(const network::NetworkPlan& plan, std::size_t limit) {
  std::vector<bool> pick(plan.size(), false);
  const auto main = network::largestFirst(network::confluenceReaches(plan), network::upstreamSize(plan), limit);
  for (const std::uint32_t c : main)
    for (std::uint32_t k = plan.up_offset[c]; k < plan.up_offset[c + 1]; ++k) pick[plan.up_reach[k]] = true;
  return pick;
}

}  // namespace

io::SeriesSelection chooseSeries(std::string_view spec, const network::NetworkPlan& plan) {
  const std::uint32_t n = static_cast<std::uint32_t>(plan.size());
  std::vector<bool> pick(n, false);
  std::map<std::string_view, std::uint32_t> by_id;
  std::vector<std::string> unknown;
  auto mark = [&](auto&& wanted) {
    for (std::uint32_t i = 0; i < n; ++i)
      if (wanted(i)) pick[i] = true;
  };
  auto outlets = [&](std::uint32_t i) { return plan.isOutlet(i); };
  auto confluences = [&](std::uint32_t i) { return flowsIntoConfluence(plan, i); };
  std::size_t start = 0;
  while (start <= spec.size()) {
    std::size_t end = spec.find(',', start);
    if (end == std::string_view::npos) end = spec.size();
    std::string_view token = spec.substr(start, end - start);
    while (!token.empty() && std::isspace(static_cast<unsigned char>(token.front()))) token.remove_prefix(1);
    while (!token.empty() && std::isspace(static_cast<unsigned char>(token.back()))) token.remove_suffix(1);
    start = end + 1;
    if (token.empty() || token == "none") continue;
    if (token == "all" || (token == "auto" && n < kAutoAllBelowReaches)) {
      mark([](std::uint32_t) { return true; });
    } else if (token == "auto") {
      mark(outlets);
      const std::vector<bool> main = mainConfluenceBranches(plan, kAutoConfluences);
      mark([&](std::uint32_t i) { return bool(main[i]); });
    } else if (token == "outlets") {
      mark(outlets);
    } else if (token == "confluences") {
      mark(confluences);
    } else {
      if (by_id.empty())
        for (std::uint32_t i = 0; i < n; ++i) by_id.emplace(plan.reach_id[i], i);
      auto it = by_id.find(token);
      if (it == by_id.end())
        unknown.emplace_back(token);
      else
        pick[it->second] = true;
    }
  }
  if (!unknown.empty()) {
    InputLocation at;
    at.field = "hydrographs";
    throw InputError(at, fmt::format("reach ids not in the network: {}", fmt::join(unknown, ", ")));
  }
  std::vector<std::uint32_t> chosen;
  for (std::uint32_t i = 0; i < n; ++i)
    if (pick[i]) chosen.push_back(i);
  return chosen.size() == n ? io::SeriesSelection::all() : io::SeriesSelection::of(std::move(chosen));
}

void requireHydrographRows(std::string_view spec, const network::NetworkPlan& plan, std::size_t steps,
                           std::size_t max_rows) {
  const std::vector<bool> mask = chooseSeries(spec, plan).mask(plan.size());
  const auto reaches = static_cast<std::size_t>(std::count(mask.begin(), mask.end(), true));
  const double rows = static_cast<double>(reaches) * static_cast<double>(steps);
  if (rows <= static_cast<double>(max_rows)) return;
  InputLocation at;
  at.field = "hydrographs";
  throw InputError(at, fmt::format("{} reaches × {} time steps would write {:.0f} hydrograph rows, more than the {} "
                                   "allowed; choose fewer reaches (--hydrographs outlets, or none), or give "
                                   "--max-hydrograph-rows {:.0f} (or max_hydrograph_rows = {:.0f} in the run file) "
                                   "to allow them",
                                   reaches, steps, rows, max_rows, rows, rows));
}

std::vector<std::uint32_t> namedReaches(std::string_view ids, const network::NetworkPlan& plan,
                                        const std::string& field) {
  std::map<std::string_view, std::uint32_t> by_id;
  for (std::uint32_t i = 0; i < plan.size(); ++i) by_id.emplace(plan.reach_id[i], i);
  std::vector<std::uint32_t> out;
  std::vector<std::string> unknown;
  std::size_t start = 0;
  while (start <= ids.size()) {
    std::size_t end = ids.find(',', start);
    if (end == std::string_view::npos) end = ids.size();
    std::string_view token = ids.substr(start, end - start);
    while (!token.empty() && std::isspace(static_cast<unsigned char>(token.front()))) token.remove_prefix(1);
    while (!token.empty() && std::isspace(static_cast<unsigned char>(token.back()))) token.remove_suffix(1);
    start = end + 1;
    if (token.empty()) continue;
    const auto it = by_id.find(token);
    if (it == by_id.end()) unknown.emplace_back(token);
    else if (std::find(out.begin(), out.end(), it->second) == out.end()) out.push_back(it->second);
  }
  InputLocation at;
  at.field = field;
  if (!unknown.empty()) throw InputError(at, fmt::format("reach ids not in the network: {}", fmt::join(unknown, ", ")));
  if (out.size() > kMostReportReaches)
    throw InputError(at, fmt::format("{} reaches named; at most {} get a panel (the GeoPackage's hydrographs "
                                     "table holds any number: --hydrographs)",
                                     out.size(), kMostReportReaches));
  return out;
}

}  // namespace reachwise::run
