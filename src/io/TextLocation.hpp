#pragma once
// Where in a text file an InputError points (private to src/io).

#include <cstdint>
#include <string>

#include "reachwise/Error.hpp"

namespace reachwise::io::detail {

/// `file`, 1-based `line`; the other members unset.
inline InputLocation textLocation(const std::string& file, std::int64_t line) {
  InputLocation where;
  where.file = file;
  where.line = line;
  return where;
}

}  // namespace reachwise::io::detail
