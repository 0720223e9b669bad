#pragma once
// Test support: what an InputError says, for tests of refusals.

#include <functional>
#include <string>

#include "reachwise/Error.hpp"

namespace testsupport {

/// The message of the InputError `f` throws, or "(no InputError)".
inline std::string errorOf(const std::function<void()>& f) {
  try {
    f();
  } catch (const reachwise::InputError& e) {
    return e.what();
  }
  return "(no InputError)";
}

inline bool contains(const std::string& s, const std::string& part) { return s.find(part) != std::string::npos; }

}  // namespace testsupport
