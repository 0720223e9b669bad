#pragma once
/// \file
/// The lines that topology from geometry cut into pieces (`<id>.1`,
/// `<id>.2`, ... from where the flow enters), by the line's own id: what
/// maps ids given for a line to its pieces, and what explains an id that
/// names no reach.

#include <cstdint>
#include <functional>
#include <map>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network {

class CutLines {
public:
  /// From the records' `line_id` and `piece`.
  static CutLines of(const ReachTable& table);
  /// From the plan's `line_id` and `piece` (none when the plan has no such columns).
  static CutLines of(const NetworkPlan& plan);

  bool empty() const noexcept { return lines_.empty(); }
  /// The piece ids of cut line `line_id`, by piece number (the top piece
  /// first); null when no line of that id was cut.
  const std::vector<std::string>* pieces(std::string_view line_id) const;
  /// The cut line `id` is, or looks like a piece of (`<line>.<anything>`,
  /// the longest such line id); empty when none.
  std::string lineOf(std::string_view id) const;
  /// For an id that names no reach: "reach 20 was cut into 20.1, 20.2"
  /// for that line (lineOf); empty when there is none.
  std::string hint(std::string_view id) const;

private:
  /// Built from (line id, piece number, piece id) for every piece.
  using Piece = std::pair<std::uint32_t, std::string>;
  explicit CutLines(std::map<std::string, std::vector<Piece>, std::less<>> pieces);

  std::map<std::string, std::vector<std::string>, std::less<>> lines_;  ///< line id -> piece ids
};

}  // namespace reachwise::network
