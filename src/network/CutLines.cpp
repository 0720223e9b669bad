#include "reachwise/network/CutLines.hpp"

#include <algorithm>

#include <fmt/format.h>

namespace reachwise::network {

CutLines::CutLines(std::map<std::string, std::vector<Piece>, std::less<>> pieces) {
  for (auto& [line, list] : pieces) {
    std::sort(list.begin(), list.end());
    auto& ids = lines_[line];
    for (auto& p : list) ids.push_back(std::move(p.second));
  }
}

CutLines CutLines::of(const ReachTable& table) {
  std::map<std::string, std::vector<Piece>, std::less<>> pieces;
  for (const auto& r : table.reaches)
    if (!r.line_id.empty()) pieces[r.line_id].emplace_back(r.piece, r.id);
  return CutLines(std::move(pieces));
}

CutLines CutLines::of(const NetworkPlan& plan) {
  std::map<std::string, std::vector<Piece>, std::less<>> pieces;
  if (plan.line_id.size() == plan.size() && plan.piece.size() == plan.size())
    for (std::size_t i = 0; i < plan.size(); ++i)
      if (!plan.line_id[i].empty()) pieces[plan.line_id[i]].emplace_back(plan.piece[i], plan.reach_id[i]);
  return CutLines(std::move(pieces));
}

const std::vector<std::string>* CutLines::pieces(std::string_view line_id) const {
  const auto it = lines_.find(line_id);
  return it == lines_.end() ? nullptr : &it->second;
}

std::string CutLines::lineOf(std::string_view id) const {
  // The id itself, then every prefix ending before a '.', longest first
  // (a line id may hold dots of its own).
  for (std::size_t end = id.size(); end != std::string_view::npos && end > 0; end = id.rfind('.', end - 1))
    if (pieces(id.substr(0, end))) return std::string(id.substr(0, end));
  return {};
}

std::string CutLines::hint(std::string_view id) const {
  const std::string line = lineOf(id);
  if (line.empty()) return {};
  return fmt::format("reach {} was cut into {}", line, fmt::join(*pieces(line), ", "));
}

}  // namespace reachwise::network
