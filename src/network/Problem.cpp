#include "reachwise/network/Problem.hpp"

#include <array>
#include <utility>

namespace reachwise::network {

namespace {

using enum ProblemCode;
constexpr Severity E = Severity::Error, W = Severity::Warning, I = Severity::Info;

// clang-format off
constexpr std::array<ProblemKind, kProblemCodeCount> kKinds{{
  {EmptyLayer,              "empty_layer",               E, false, "the layer has no features"},
  {NonLineGeometry,         "non_line_geometry",         E, false, "a point, polygon, ... (feature left out)"},
  {EmptyGeometry,           "empty_geometry",            E, false, "no geometry, empty, or a part with < 2 vertices (left out)"},
  {InvalidGeometry,         "invalid_geometry",          E, false, "non-finite coordinates, or not valid lat/lon in a geographic CRS (left out)"},
  {MultipartGap,            "multipart_gap",             E, false, "the parts of a multi-line do not join end to end"},
  {DuplicateId,             "duplicate_id",              E, false, "an id used by an earlier feature or record"},
  {MissingAttribute,        "missing_attribute",         E, true,  "a needed value is null and has no default"},
  {InvalidAttribute,        "invalid_attribute",         E, true,  "a value that cannot be read or is out of its range"},
  {ImplausibleAttribute,    "implausible_attribute",     W, true,  "a value in range but unlikely (n or slope above 0.3)"},
  {ZeroLength,              "zero_length",               E, false, "the reach length (field or geometry) is not > 0"},
  {LengthMismatch,          "length_mismatch",           W, false, "the length field and the geometry differ by > 10 %"},
  {NonFiniteLength,         "non_finite_length",         E, false, "the reach length (field or geometry) is not a finite number"},
  {SplitLine,               "split_line",                W, false, "a line was cut where a tributary joins mid-line"},
  {FlippedLine,             "flipped_line",              W, false, "a line was reversed by the orientation step"},
  {ProbableGap,             "probable_gap",              E, false, "an unconnected end close to another line"},
  {UnresolvedGap,           "unresolved_gap",            W, false, "a probable gap reported as a warning (unresolved_gaps = \"warn\"); the end stays a headwater or outlet"},
  {ClosedLine,              "closed_line",               E, false, "both ends of a line fall on one node"},
  {UnknownOutlet,           "unknown_outlet",            E, false, "a configured outlet id is not in the layer"},
  {OutletNotAtEnd,          "outlet_not_at_end",         E, false, "a configured outlet reach has no free end (another line meets both its ends)"},
  {NearMiss,                "near_miss",                 I, false, "an unconnected end within 1000 m of a line it is not joined to (problems layer only)"},
  {AddedConnection,         "added_connection",          I, false, "an end joined to a line or point by network.connect"},
  {UnknownToReach,          "unknown_to_reach",          E, false, "to_reach names no reach of the layer"},
  {SelfLoop,                "self_loop",                 E, false, "a reach names itself as its downstream reach"},
  {Cycle,                   "cycle",                     E, false, "reaches that drain into each other"},
  {BifurcationSplitMissing, "bifurcation_split_missing", E, false, "a branch of a bifurcation has no split"},
  {BifurcationSplitRange,   "bifurcation_split_range",   E, false, "a branch's split is outside 0-1"},
  {BifurcationSplitSum,     "bifurcation_split_sum",     E, false, "the branches' splits do not sum to 1"},
  {SplitUnused,             "split_unused",              W, false, "split on a reach that is not a branch of a bifurcation"},
  {Basin,                   "basin",                     I, false, "one of several basins of a layer, with its outlet(s)"},
  {SplitAssumed,            "split_assumed",             W, false, "a bifurcation without split values got shares by the default rule (default_split)"},
  {AreaBelowUpstream,       "area_below_upstream",       W, false, "a reach's given drainage area is smaller than the sum of the areas flowing into it; the sum is used"},
  {DemNodata,               "dem_nodata",                W, false, "part or all of a reach has no DEM data (nodata or outside the raster), with the valid fraction"},
  {DemProfileRise,          "dem_profile_rise",          W, false, "the fitted DEM profile of a reach rises downstream by more than prepare.rise_threshold_m"},
  {SlopeFloored,            "slope_floored",             I, false, "a bed slope from the DEM was raised to prepare.min_slope"},
  {LakePiece,               "lake_piece",                W, false, "a reach with both ends on or inside a lake (dropped when the lake is routed)"},
  {TerminalLake,            "terminal_lake",             I, false, "a lake with no outflowing reach: a terminal sink"},
  {LakeWithoutInflow,       "lake_without_inflow",       W, false, "a lake no reach flows into"},
  {LakeOverlap,             "lake_overlap",              E, false, "a reach end on or inside several lakes"},
}};
// clang-format on

constexpr bool inCodeOrder() {
  for (std::size_t i = 0; i < kKinds.size(); ++i)
    if (static_cast<std::size_t>(kKinds[i].code) != i) return false;
  return true;
}
static_assert(inCodeOrder(), "one row per ProblemCode, in enum order");

}  // namespace

std::span<const ProblemKind> problemKinds() noexcept { return kKinds; }

const ProblemKind& kindOf(ProblemCode code) noexcept { return kKinds[static_cast<std::size_t>(code)]; }

std::string_view codeName(ProblemCode code) noexcept { return kindOf(code).name; }

Problem::Problem(ProblemCode c, std::string m)
    : code(c), severity(kindOf(c).severity), message(std::move(m)) {}

}  // namespace reachwise::network
