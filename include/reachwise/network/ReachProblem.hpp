#pragma once
/// \file
/// A Problem tied to one reach record.

#include <string>
#include <utility>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network {

/// A problem of record `r` located at (x, y), in CRS units.
inline Problem reachProblem(std::string code, Severity severity, const ReachRecord& r, double x,
                            double y, std::string message) {
  Problem p;
  p.code = std::move(code);
  p.severity = severity;
  p.fid = r.fid;
  p.reach_id = r.id;
  p.x = x;
  p.y = y;
  p.message = std::move(message);
  return p;
}

/// The same, located at the record's first vertex (unlocated without geometry).
inline Problem reachProblem(std::string code, Severity severity, const ReachRecord& r,
                            std::string message) {
  const bool at_start = !r.line.empty();
  return reachProblem(std::move(code), severity, r, at_start ? r.line.front().x : Problem{}.x,
                      at_start ? r.line.front().y : Problem{}.y, std::move(message));
}

}  // namespace reachwise::network
