#pragma once
/// \file
/// A problem found while reading or validating a network, and the closed
/// set of problem codes: one table (Problem.cpp) gives each code its stable
/// text name, its severity and what it means (docs/formats.md lists them).

#include <cstddef>
#include <cstdint>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace reachwise::network {

enum class Severity {
  Info,     ///< a fact worth knowing (e.g. each basin of a layer with several)
  Warning,  ///< reported; routing goes ahead
  Error,    ///< routing is refused
};

/// Every problem reachwise reports. The text names (codeName()) are written
/// to outputs and never change; new codes go at the end of a group.
enum class ProblemCode : std::uint8_t {
  // reading the layer (io::readNetwork)
  EmptyLayer,
  NonLineGeometry,
  EmptyGeometry,
  InvalidGeometry,
  MultipartGap,
  DuplicateId,
  MissingAttribute,
  InvalidAttribute,
  ImplausibleAttribute,
  ZeroLength,
  LengthMismatch,
  NonFiniteLength,
  // topology from geometry (geos::buildTopologyFromGeometry)
  SplitLine,
  FlippedLine,
  ProbableGap,
  UnresolvedGap,
  ClosedLine,
  UnknownOutlet,
  OutletNotAtEnd,
  NearMiss,
  AddedConnection,
  // the graph (validate)
  UnknownToReach,
  SelfLoop,
  Cycle,
  BifurcationSplitMissing,
  BifurcationSplitRange,
  BifurcationSplitSum,
  SplitUnused,
  Basin,
  SplitAssumed,
  // preparing attributes (terrain::drainageArea)
  AreaBelowUpstream,
  // bed slopes from a DEM (terrain::bedSlopes, `reachwise prepare`)
  DemNodata,
  DemProfileRise,
  SlopeFloored,
  // lakes (linkLakes)
  LakePiece,
  TerminalLake,
  LakeWithoutInflow,
  LakeOverlap,  ///< the last code
};

inline constexpr std::size_t kProblemCodeCount = static_cast<std::size_t>(ProblemCode::LakeOverlap) + 1;

/// One row of the code table.
struct ProblemKind {
  ProblemCode code;
  std::string_view name;     ///< stable text name, e.g. "flipped_line"
  Severity severity;
  /// True for codes about one attribute of a reach: a reach may carry
  /// several problems of such a code, told apart by their messages.
  bool per_attribute;
  std::string_view summary;  ///< what the code means, one line
};

/// The code table: one row per code, in the order of ProblemCode.
std::span<const ProblemKind> problemKinds() noexcept;
const ProblemKind& kindOf(ProblemCode code) noexcept;
std::string_view codeName(ProblemCode code) noexcept;

struct Problem {
  /// A problem of `code`, with the code's severity, tied to no feature and
  /// no place until the caller sets them.
  Problem(ProblemCode code, std::string message);

  ProblemCode code;
  Severity severity;        ///< the code's (kindOf(code).severity)
  std::int64_t fid = -1;    ///< source feature id, -1 when not tied to one feature
  std::string reach_id;
  double x = std::numeric_limits<double>::quiet_NaN();  ///< location in CRS units
  double y = std::numeric_limits<double>::quiet_NaN();
  std::string message;      ///< one plain sentence
  /// For a problem about two lines (`near_miss`): the other line, and the
  /// distance between them in metres (NaN when not given).
  std::string other_reach_id;
  double distance_m = std::numeric_limits<double>::quiet_NaN();

  /// The code's stable text name, as written to outputs ("cycle", "flipped_line").
  std::string_view codeName() const noexcept { return network::codeName(code); }
};

using ProblemList = std::vector<Problem>;

inline bool hasErrors(const ProblemList& problems) {
  for (const auto& p : problems)
    if (p.severity == Severity::Error) return true;
  return false;
}

}  // namespace reachwise::network
