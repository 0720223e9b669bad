#pragma once
/// \file
/// Joining the parts of a multi-part line into one line.

#include <optional>
#include <vector>

#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network::geos {

/// Joins parts that meet end to end (exactly equal end points, in any order
/// and direction) into one line, with GEOS's line merger. The result runs
/// in the direction of the first part where GEOS leaves a choice. Returns
/// nullopt when the parts do not form one continuous line (a gap or a
/// branch). Precondition: every part has at least two vertices with finite
/// coordinates.
std::optional<std::vector<Point3>> mergeLineParts(const std::vector<std::vector<Point3>>& parts);

}  // namespace reachwise::network::geos
