#include "reachwise/run/Forcing.hpp"

#include <algorithm>
#include <filesystem>
#include <map>
#include <string_view>
#include <unordered_set>

#include <fmt/format.h>

#include "reachwise/network/CutLines.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::run {

namespace {

io::OpenedForcing openChecked(const ForcingFiles& files, const network::NetworkPlan& plan, units::System unit,
                              const std::map<std::string, std::string, std::less<>>* dropped_in_lake) {
  if (files.inflow.empty() && files.lateral.empty())
    throw InvalidParameter("forcing", "neither an inflow nor a lateral inflow file is named");
  io::CsvForcingOptions options;
  options.dt_s = files.dt_s;
  options.max_steps = files.max_steps;
  options.unit = unit;
  auto path = [](const std::string& p) {
    if (p.empty()) return std::optional<std::filesystem::path>();
    requireExisting(p);
    return std::optional<std::filesystem::path>(p);
  };
  const auto inflow = path(files.inflow);
  const auto lateral = path(files.lateral);
  io::OpenedForcing opened = io::openForcing(inflow, lateral, options);
  // A hash set of views: no copy of the (up to millions of) ids.
  std::unordered_set<std::string_view> known;
  known.reserve(plan.size());
  for (const std::string& id : plan.reach_id) known.insert(id);
  const network::CutLines cut = network::CutLines::of(plan);
  io::requireKnownReaches(
      *opened.source, [&](std::string_view id) { return known.contains(id) || cut.pieces(id); },
      [&](std::string_view id) {
        if (dropped_in_lake)
          if (const auto it = dropped_in_lake->find(id); it != dropped_in_lake->end())
            return fmt::format("reach {} lies inside lake {} and was dropped from the network, which is joined across "
                               "the lake (give its forcing to a reach flowing into the lake, or to one leaving it)",
                               id, it->second);
        const std::string line = cut.lineOf(id);
        return line.empty() ? std::string()
                            : fmt::format("{} (give forcing for {} or for a piece)", cut.hint(id), line);
      });
  checkCutLineForcing(*opened.source, plan);
  return opened;
}

bool has(const std::vector<std::string>& sorted_ids, std::string_view id) {
  return std::binary_search(sorted_ids.begin(), sorted_ids.end(), id, std::less<>());
}

}  // namespace

void checkCutLineForcing(const io::ForcingSource& source, const network::NetworkPlan& plan) {
  const network::CutLines cut = network::CutLines::of(plan);
  if (cut.empty()) return;
  std::vector<std::string> both;
  std::string first_file;
  for (io::ForcingKind kind : {io::ForcingKind::Inflow, io::ForcingKind::Lateral}) {
    const std::vector<std::string> ids = source.ids(kind);
    for (const std::string& id : ids) {
      const auto* pieces = cut.pieces(id);
      if (!pieces) continue;
      for (const std::string& piece : *pieces) {
        if (!has(ids, piece)) continue;
        const std::string file = source.origin(kind);
        if (first_file.empty()) first_file = file;
        both.push_back(fmt::format("{} {}{}: {} and its piece {}", io::kindName(kind),
                                   file.empty() ? "" : "file ", file, id, piece));
      }
    }
  }
  if (both.empty()) return;
  InputLocation where;
  where.file = first_file;
  throw InputError(where, fmt::format("forcing given both for a cut line and for its piece ({}); give "
                                      "it for the line or for its pieces, not both",
                                      fmt::join(both, "; ")));
}

PlanForcing::PlanForcing(const io::ForcingSource& source, const network::NetworkPlan& plan)
    : source_(source), plan_(plan) {
  const network::CutLines cut = network::CutLines::of(plan);
  if (cut.empty()) return;
  std::map<std::string_view, std::vector<std::uint32_t>> pieces;  // line id -> plan reaches
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (!plan.line_id[i].empty()) pieces[plan.line_id[i]].push_back(i);
  const std::vector<std::string> inflow_ids = source.ids(io::ForcingKind::Inflow);
  const std::vector<std::string> lateral_ids = source.ids(io::ForcingKind::Lateral);
  for (const auto& [line, reaches] : pieces) {
    const bool inflow = has(inflow_ids, line), lateral = has(lateral_ids, line);
    if (!inflow && !lateral) continue;
    from_line_.resize(plan.size());
    if (inflow) {
      const auto top = std::find_if(reaches.begin(), reaches.end(),
                                    [&](std::uint32_t i) { return plan.piece[i] == 1; });
      REACHWISE_ASSERT(top != reaches.end());
      from_line_[*top].inflow = true;
      notes_.push_back(fmt::format("cut_line_forcing {}: the inflow given for {} enters at its top piece {}",
                                   line, line, plan.reach_id[*top]));
    }
    if (lateral) {
      double total = 0;
      for (std::uint32_t i : reaches) total += plan.length_m[i];
      std::vector<std::pair<std::uint32_t, std::uint32_t>> by_piece;  // piece number, reach
      for (std::uint32_t i : reaches) {
        from_line_[i].lateral_share = plan.length_m[i] / total;
        by_piece.emplace_back(plan.piece[i], i);
      }
      std::sort(by_piece.begin(), by_piece.end());
      std::vector<std::string> shares;
      for (const auto& [number, i] : by_piece)
        shares.push_back(fmt::format("{} {:.3g} %", plan.reach_id[i], 100 * from_line_[i].lateral_share));
      notes_.push_back(fmt::format("cut_line_forcing {}: the lateral inflow given for {} is shared over its "
                                   "pieces by length ({})",
                                   line, line, fmt::join(shares, ", ")));
    }
  }
}

bool PlanForcing::inflow(std::uint32_t reach, std::span<double> out) const {
  const bool from_line = !from_line_.empty() && from_line_[reach].inflow;
  return source_.fill(io::ForcingKind::Inflow, from_line ? plan_.line_id[reach] : plan_.reach_id[reach], out);
}

bool PlanForcing::lateral(std::uint32_t reach, std::span<double> out) const {
  const double share = from_line_.empty() ? 0.0 : from_line_[reach].lateral_share;
  if (!(share > 0)) return source_.fill(io::ForcingKind::Lateral, plan_.reach_id[reach], out);
  if (!source_.fill(io::ForcingKind::Lateral, plan_.line_id[reach], out)) return false;
  for (double& q : out) q *= share;
  return true;
}

routing::ForcingProvider::ReadsOnDemand PlanForcing::readsOnDemand() const {
  return {source_.readsOnDemand(io::ForcingKind::Inflow), source_.readsOnDemand(io::ForcingKind::Lateral)};
}

RunForcing::RunForcing(const ForcingFiles& files, const network::NetworkPlan& plan, units::System unit,
                       const std::map<std::string, std::string, std::less<>>* dropped_in_lake)
    : opened_(openChecked(files, plan, unit, dropped_in_lake)), bound_(*opened_.source, plan) {
  opened_.warnings.insert(opened_.warnings.end(), bound_.notes().begin(), bound_.notes().end());
}

std::vector<double> baseFlows(const network::NetworkPlan& plan) {
  std::vector<double> q(plan.size(), 0.0);
  bool any = false;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const double b = plan.base_flow_m3s[i];
    if (b > 0) q[i] = b, any = true;  // NaN (none) and 0 stay 0
  }
  return any ? q : std::vector<double>{};
}

}  // namespace reachwise::run
