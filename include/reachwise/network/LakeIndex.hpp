#pragma once
/// \file
/// Which lakes a point lies on, for many points: a uniform grid over the
/// lakes' bounding boxes (widened by the snapping tolerance), so that a
/// point is tested only against the lakes whose boxes cover its cell.
/// Building it is O(lakes + cells they cover); a query is O(lakes in one
/// cell) plus the exact test of each candidate, independent of the number
/// of lakes for lakes spread over the map.

#include <cstdint>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"

namespace reachwise::network {

struct LakeTable;

class LakeIndex {
public:
  /// Indexes every lake of `lakes` (kept by reference: it must outlive the
  /// index). `tolerance` (CRS units, >= 0) is how far outside its boundary a
  /// point still lies on a lake.
  LakeIndex(const LakeTable& lakes, double tolerance);

  /// The lakes (table positions, ascending) that `p` lies on: inside the
  /// rings (even–odd rule) or within the tolerance of their boundary. The
  /// same answer as testing every lake with insideRings and
  /// distanceToRings, in table order.
  void lakesAt(Point2 p, std::vector<std::size_t>& out) const;

private:
  struct Box {
    double min_x, min_y, max_x, max_y;
  };
  const LakeTable& lakes_;
  double tolerance_;
  std::vector<Box> boxes_;               ///< per lake, widened by the tolerance
  double x0_ = 0, y0_ = 0, cell_ = 1;    ///< grid origin and cell size
  std::size_t cols_ = 0, rows_ = 0;
  std::vector<std::uint32_t> cell_begin_;  ///< lakes of cell c: cell_lake_[cell_begin_[c] .. cell_begin_[c+1])
  std::vector<std::uint32_t> cell_lake_;
  std::vector<std::uint32_t> large_;       ///< lakes covering too many cells, tested for every point
};

}  // namespace reachwise::network
