#pragma once
/// \file
/// A Problem tied to one reach record.

#include <string>
#include <utility>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network {

/// A problem of record `r` located at (x, y), in CRS units.
inline Problem reachProblem(ProblemCode code, const ReachRecord& r, double x, double y,
                            std::string message) {
  Problem p(code, std::move(message));
  p.fid = r.fid;
  p.reach_id = r.id;
  p.x = x;
  p.y = y;
  return p;
}

/// The same, located at the first vertex of the line as digitised
/// (unlocated without geometry).
inline Problem reachProblem(ProblemCode code, const ReachRecord& r, std::string message) {
  Problem p = reachProblem(code, r, ReachRecord::kUnset, ReachRecord::kUnset, std::move(message));
  if (!r.line.empty()) {
    const Point3& first = r.reoriented ? r.line.back() : r.line.front();
    p.x = first.x;
    p.y = first.y;
  }
  return p;
}

}  // namespace reachwise::network
