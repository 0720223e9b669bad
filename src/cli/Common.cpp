#include "Common.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <new>
#include <ostream>

#include "Subcommand.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::cli {

int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body) {
  try {
    return body();
  } catch (const InternalError& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  } catch (const Error& e) {
    fmt::print(err, "error: {}\n", e.what());
    return kExitInput;
  } catch (const std::bad_alloc&) {
    fmt::print(err, "error: out of memory while working on {}\n", subject);
    return kExitInput;
  } catch (const std::exception& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  }
}

}  // namespace reachwise::cli
