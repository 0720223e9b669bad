#pragma once
/// \file
/// A problem found while reading or validating a network.

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

namespace reachwise::network {

enum class Severity {
  Info,     ///< a fact worth knowing (e.g. each basin of a layer with several)
  Warning,  ///< reported; routing goes ahead
  Error,    ///< routing is refused
};

struct Problem {
  std::string code;         ///< stable, e.g. "cycle", "unknown_to_reach" (docs/formats.md)
  Severity severity = Severity::Error;
  std::int64_t fid = -1;    ///< source feature id, -1 when not tied to one feature
  std::string reach_id;
  double x = std::numeric_limits<double>::quiet_NaN();  ///< location in CRS units
  double y = std::numeric_limits<double>::quiet_NaN();
  std::string message;      ///< one plain sentence
};

using ProblemList = std::vector<Problem>;

inline bool hasErrors(const ProblemList& problems) {
  for (const auto& p : problems)
    if (p.severity == Severity::Error) return true;
  return false;
}

}  // namespace reachwise::network
