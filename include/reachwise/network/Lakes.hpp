#pragma once
/// \file
/// Lakes and reservoirs in a reach network: each lake's outline and outflow
/// rule (as read from a polygon layer, io::readLakes), and which reaches
/// flow into it and which carry its outflow (linkLakes).

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/routing/LevelPool.hpp"

namespace reachwise::network {

/// One lake as read. `rings` are every ring of its polygon(s), exterior and
/// holes alike, in the network layer's CRS units: a point is inside when a
/// ray from it crosses the rings an odd number of times.
struct LakeRecord {
  std::string lake_id;
  std::int64_t fid = -1;                    ///< source feature id
  std::vector<std::vector<Point2>> rings;
  std::string wkt;                          ///< the polygon(s) as read (WKT), for outputs
  double area_m2 = 0;                       ///< of the polygon (prismatic level–storage)
  routing::OutflowRule rule;
  std::optional<double> initial_level_m;
  double bottom_level_m = 0;                ///< the empty level (a table's first level)
  /// A level–storage relation from a table (levels increasing, storage from
  /// 0 and increasing); empty: prismatic over `area_m2`.
  std::vector<double> storage_level_m, storage_m3;

  /// The level at which the lake holds no storage: a table's first level;
  /// for a prismatic lake, a weir's crest, else `bottom_level_m`.
  double emptyLevel() const;
  /// The lake for level-pool routing (the table's level–storage relation,
  /// else prismatic over `area_m2`). Throws InvalidParameter naming the
  /// quantity and the lake.
  routing::LevelPool levelPool() const;
};

struct LakeTable {
  std::string source, layer;
  /// Metres per CRS unit (planar), or a nominal 111 320 m per degree for a
  /// geographic CRS: what turns the snap tolerance into CRS units.
  double metres_per_unit = 1.0;
  std::vector<LakeRecord> lakes;
};

/// Which reaches meet a lake. Indices are plan positions.
struct LakeLinks {
  std::vector<std::uint32_t> inflow;   ///< reaches whose downstream end is on or inside the lake
  std::vector<std::uint32_t> outflow;  ///< reaches whose upstream end is on or inside the lake
  std::vector<std::uint32_t> inside;   ///< reaches with both ends on or inside (dropped from routing)
  bool terminal() const { return outflow.empty(); }
};

/// True when `p` is inside the rings (even–odd rule).
bool insideRings(const std::vector<std::vector<Point2>>& rings, Point2 p);
/// Distance from `p` to the nearest ring edge, in CRS units.
double distanceToRings(const std::vector<std::vector<Point2>>& rings, Point2 p);

/// Attaches reaches to lakes by geometry: an end lies "on" a lake when it is
/// inside its polygon or within `tolerance` (CRS units) of its boundary. A
/// reach whose downstream end lies on a lake flows into it; one whose
/// upstream end does carries its outflow; one with both ends on the same
/// lake lies inside it (a piece to drop). Problems: `lake_piece` per inside
/// reach, `terminal_lake` for a lake without outflowing reach,
/// `lake_without_inflow`, and `lake_overlap` for a reach end on two lakes
/// (the first in table order is taken). One entry per lake, in table order.
/// Each end is looked up in a grid over the lakes' boxes (LakeIndex), not
/// tested against every lake: near O(reaches + lakes) for lakes spread
/// over the map (0.2 s for 1M reaches and 10k lakes, docs/performance.md).
std::vector<LakeLinks> linkLakes(const NetworkPlan& plan, const LakeTable& lakes, double tolerance,
                                 ProblemList& problems);

/// The `terminal_lake` (no outflowing reach) and `lake_without_inflow`
/// problems of one lake, as linkLakes reports them.
void reportLakeEnds(const LakeRecord& lake, const LakeLinks& links, ProblemList& problems);

/// Names of the reach layer's fields, for messages.
struct LakeIdFields {
  std::string lake_id = "lake_id";
  std::string to_reach = "to_reach";
};

/// After linkLakes: attaches the reaches that name a lake in their
/// `lake_id` (ReachRecord::lake_id) to it, whatever their geometry
/// (docs/formats.md, "Lakes and reservoirs"):
///  - a naming reach flows into the lake it names: it joins that lake's
///    inflow and leaves any other lake's inflow and that lake's outflow; one
///    lying inside the lake stays inside. Of a line cut into pieces, only
///    the last piece (where the flow leaves the line) takes its line's lake.
///  - a lake no reach leaves by geometry takes as outflowing reaches those
///    its naming reaches flow into (`to_reach`, several for a bifurcation);
///    none: a terminal lake.
/// The `terminal_lake` and `lake_without_inflow` problems of the lakes it
/// changes are replaced. Throws InputError naming the reach layer's file,
/// layer, feature, reach and field for a lake id that is no lake of
/// `lakes`, for naming reaches of one lake that flow into different reaches,
/// and for a naming reach that flows into a reach that neither leaves its
/// lake nor lies inside it.
void linkNamedLakes(const NetworkPlan& plan, const ReachTable& table, const LakeTable& lakes,
                    const LakeIdFields& fields, std::vector<LakeLinks>& links, ProblemList& problems);

}  // namespace reachwise::network
