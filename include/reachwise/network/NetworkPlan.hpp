#pragma once
/// \file
/// The frozen, compact form of a validated reach network that routing uses.
/// Plain arrays, reaches in topological order (every upstream reach comes
/// before the reaches it feeds). Built by ReachGraph::freeze().

#include <cstdint>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"

namespace reachwise::network {

struct Point2 {
  double x = 0, y = 0;  ///< in the layer's CRS units
};

struct NetworkPlan {
  // ---- one entry per reach, index = position in topological order ----
  std::vector<std::string> reach_id;           ///< external id (text form)
  std::vector<std::int64_t> fid;               ///< source feature id, -1 when synthetic
  std::vector<std::uint32_t> record;           ///< row in the ReachTable it was built from
  /// The record's `line_id` and `piece`: for a piece of a line cut by
  /// topology from geometry, the line's id and the piece's number (1 = top);
  /// empty / 0 otherwise. A plan put together by hand may leave both
  /// columns empty (no cut lines).
  std::vector<std::string> line_id;
  std::vector<std::uint32_t> piece;
  std::vector<double> length_m;
  std::vector<hydraulics::Section> section;     ///< built and checked by freeze()
  std::vector<double> muskingum_k_s;           ///< Muskingum K in seconds, NaN when not given
  std::vector<double> muskingum_x;             ///< NaN when not given
  std::vector<double> base_flow_m3s;           ///< constant flow entering along the reach, NaN when none
  std::vector<std::uint32_t> basin;            ///< connected component (0..n_basins-1)
  std::vector<std::uint16_t> strahler;         ///< Strahler order (side arms not counted, Strahler.hpp)
  /// Share of the bifurcating reach's outflow the reach takes as a branch
  /// of a bifurcation (as resolved, Splits.hpp); NaN when it is no branch.
  std::vector<double> split;
  /// True when the node at the top of the reach is a side-arm return: a
  /// confluence where a side arm rejoins the channel it left (Strahler.hpp).
  /// May be empty (a plan built by hand): no side-arm returns.
  std::vector<bool> side_arm_return;
  std::vector<Point2> top, bottom;             ///< upstream / downstream end points
  /// True when the reach's line as the table holds it
  /// (`ReachTable::reaches[record[i]].line`) runs against the flow: its first
  /// vertex is `bottom`, and drawing it in flow direction means reversing it.
  /// A line that topology from geometry already turned is not reversed here
  /// (its record is `reoriented`).
  std::vector<bool> reversed;

  // ---- upstream lists, CSR: reaches feeding reach i are
  //      up_reach[up_offset[i] .. up_offset[i+1]), each index < i;
  //      up_fraction[k] is the share of that reach's outflow entering i
  //      (1 except below a bifurcation) ----
  std::vector<std::uint32_t> up_offset;        ///< size n + 1
  std::vector<std::uint32_t> up_reach;
  std::vector<double> up_fraction;

  // ---- downstream lists, CSR, same layout ----
  std::vector<std::uint32_t> down_offset;      ///< size n + 1
  std::vector<std::uint32_t> down_reach;

  std::size_t size() const noexcept { return reach_id.size(); }
  bool isOutlet(std::size_t i) const { return down_offset[i] == down_offset[i + 1]; }
  bool isHeadwater(std::size_t i) const { return up_offset[i] == up_offset[i + 1]; }
  bool isSideArmReturn(std::size_t i) const { return i < side_arm_return.size() && side_arm_return[i]; }
};

}  // namespace reachwise::network
