#pragma once
/// \file
/// Network topology from line geometry alone: which reach flows into which,
/// found from where line ends meet.

#include <array>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network::geos {

/// How flow direction is found.
enum class Orientation {
  Auto,       ///< Elevation when every line has Z at both ends (not all level), else Digitised
  Digitised,  ///< first vertex upstream, last vertex downstream
  Elevation,  ///< the higher end (Z) is upstream; level lines keep digitising order
  Outlets,    ///< each connected part flows towards its outlet(s) (see TopologyOptions::outlets)
};

/// A connection the user asks for (`[[network.connect]]`): the end of
/// `from` nearest to the target is extended by a straight segment to the
/// nearest point of the line `to_reach`, or to the point `to_point` (CRS
/// units); the normal cutting and snapping then join it there.
struct Connection {
  std::string from;                     ///< reach id (a cut line's pieces `<id>.k` are not yet cut)
  std::string to_reach;                 ///< target reach id; empty when to_point is used
  std::optional<Point3> to_point;       ///< target point in CRS units
};

/// How distances in metres relate to the coordinates of the lines.
struct CrsMetric {
  /// false: projected (or unit-stated) coordinates, `metres_per_unit` each;
  /// true: longitude/latitude on the ellipsoid (a_m, f).
  bool geographic = false;
  double metres_per_unit = 1.0;
  double a_m = 6378137.0;            ///< semi-major axis (geographic)
  double f = 1 / 298.257223563;      ///< flattening, 0 = sphere (geographic)
  double degrees_per_unit = 1.0;     ///< the CRS's angular unit in degrees (geographic)
  bool lat_first = false;            ///< the first coordinate is the latitude (geographic)
};

struct TopologyOptions {
  /// Line ends closer than this meet at one node; an end this close to the
  /// interior of another line splits it. Metres on any CRS (see CrsMetric:
  /// on a geographic CRS the distance is measured at the end's latitude on
  /// the ellipsoid); >= 0.
  double snap_tolerance_m = 5.0;
  /// An unconnected end within this distance (metres) of another line is
  /// reported as a probable gap. NaN = 10 × snap_tolerance_m.
  double gap_search_m = std::numeric_limits<double>::quiet_NaN();
  CrsMetric crs;
  /// Length in metres of a line (used for the pieces of cut lines). Unset =
  /// planar length × crs.metres_per_unit, or the geodesic length on a
  /// geographic CRS.
  std::function<double(const std::vector<Point3>&)> line_length_m;
  /// Orientation::Auto with named `outlets` orients to the outlets.
  Orientation orientation = Orientation::Auto;
  /// Outlet reach ids (a split line's pieces `<id>.k` count as `<id>`; name
  /// the line, as its pieces are numbered only after orientation); each
  /// outlet is the free end (no other line there) of its reach, the
  /// digitised downstream end when both are free. With
  /// Orientation::Outlets every line flows towards the nearest outlet of
  /// its connected part along the network (by length), except that:
  ///  - a line with Z at both ends (not level), else with both elevation
  ///    fields (not equal), flows downhill;
  ///  - a line that would be reversed keeps its digitised direction when
  ///    both its ends still lead to an outlet without it (a channel
  ///    between two distributaries of a delta, the second arm of a braid)
  ///    and keeping it makes no loop.
  /// A connected part without a named outlet flows towards the one free
  /// end that needs the fewest lines reversed; on a tie, the end of the
  /// widest line (bottom width, else diameter), then an end that is its
  /// line's digitised downstream end, wins.
  std::vector<std::string> outlets;
  /// Connections to add before cutting and snapping (see Connection); ids
  /// must be in the table (InvalidParameter otherwise).
  std::vector<Connection> connections;
  /// How a probable gap is reported: a `probable_gap` error (the default;
  /// the network is refused) or, when false, an `unresolved_gap` warning
  /// (the end stays a headwater or outlet).
  bool gaps_are_errors = true;
  /// Reach ids whose ends are known to be unconnected (a lake, the edge of
  /// the region): never reported as gaps. A split line's pieces `<id>.k`
  /// count as `<id>`. An id matching no reach throws InvalidParameter.
  std::vector<std::string> unconnected;
};

/// Distances (metres) within which unconnected line ends are counted as near-misses.
inline constexpr std::array<double, 4> kNearMissBandsM{1.0, 10.0, 100.0, 1000.0};

/// A line end that no other line touches, lying farther than the snap
/// tolerance but within the largest near-miss band of a line it is not
/// joined to.
struct NearMiss {
  std::string reach_id;        ///< the line whose end it is
  std::int64_t fid = -1;       ///< its source feature id
  double x = 0, y = 0;         ///< the end, CRS units
  double distance_m = 0;       ///< to the nearest line it is not joined to (end or interior)
  std::string other_reach_id;  ///< that line
};

/// One near-miss band: how many ends lie within `within_m` of another line,
/// and the snap tolerance (the largest of their distances) that would join
/// them all.
struct NearMissBand {
  double within_m = 0;
  std::size_t ends = 0;
  double join_tolerance_m = 0;  ///< 0 when no end lies in the band
};

/// The bands of kNearMissBandsM (cumulative: an end within 10 m is also within 100 m).
std::vector<NearMissBand> nearMissBands(const std::vector<NearMiss>& near_misses);

/// The near-miss as a `near_miss` problem (info) at the end, for the problems layer.
Problem nearMissProblem(const NearMiss& near_miss);

struct TopologySummary {
  std::size_t nodes = 0;          ///< distinct junction / end nodes after snapping
  std::size_t splits = 0;         ///< lines cut where another line's end meets their interior
  std::size_t flipped = 0;        ///< lines reversed by the orientation step
  std::size_t snapped_ends = 0;   ///< line ends moved onto a node (within the snap tolerance)
  double largest_snap_m = 0;      ///< the largest such move, metres
  std::size_t connections = 0;    ///< connections added from TopologyOptions::connections
  std::size_t probable_gaps = 0;  ///< unconnected ends near another line (error or warning)
  /// Unconnected ends within kNearMissBandsM.back() metres of a line they
  /// are not joined to, in record order (not in the problem list: a
  /// regional layer has many such headwaters; see nearMissProblem).
  std::vector<NearMiss> near_misses;
};

/// Rebuilds the topology of `table` from its geometry:
///  1. a line whose interior another line's end touches (within the
///     tolerance) is cut there; its pieces keep the attributes and record
///     the line they came from (`line_id`, `piece`); each piece's
///     `geometry_length_m` is measured on the piece itself
///     (options.line_length_m), and `length_m` and `base_flow_m3s` are
///     shared in proportion to those lengths;
///  2. line ends within the tolerance are snapped to one node (the end
///     vertices are moved onto it);
///  3. lines are oriented (`flipped_line`, warning, for each reversed line,
///     whose record is marked `reoriented`);
///  4. the pieces of each cut line get ids `<id>.1`, `<id>.2`, ... along
///     the flow: `<id>.1` is the top piece (where the flow enters the
///     line), whatever the digitising direction, so ids stay tied to a
///     place. Pieces left pointing different ways (a line across a divide)
///     are numbered in digitising order, which their `split_line` problems
///     say. Each cut is a `split_line` warning naming the pieces on either
///     side; problems of step 3 name the pieces by their final ids;
///  5. `to_reach` of every record is set to the reach leaving its
///     downstream node (nullopt at an outlet; at a bifurcation all leaving
///     reaches, sorted, joined by ';' as ReachGraph expects) and
///     `has_to_reach` is set.
/// Also reported: `probable_gap` (error: a loose end would be a false outlet;
/// only against lines the end is not already joined to, i.e. not its own
/// line nor a line sharing a node with it), `closed_line` (error: both ends
/// on one node), `unresolved_gap` (warning: a probable gap when
/// options.gaps_are_errors is false), `unknown_outlet` (error: a configured
/// outlet id is not in the table; an id like a piece of a cut line says how
/// that line was cut), `outlet_not_at_end` (error: no end of the named reach
/// is free), `added_connection` (info, one per Connection).
/// Records with fewer than two vertices or non-finite coordinates are left
/// out of the topology (their `to_reach` is cleared); the reader reports them.
/// Before step 1, each of options.connections extends its reach's nearest
/// end to the target (`added_connection`).
TopologySummary buildTopologyFromGeometry(ReachTable& table, const TopologyOptions& options,
                                          ProblemList& problems);

}  // namespace reachwise::network::geos
