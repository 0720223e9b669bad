#pragma once
// What every subcommand shares: turning errors into exit codes.

#include <functional>
#include <iosfwd>
#include <string>

namespace reachwise::cli {

/// Runs `body`; a reachwise::Error becomes one line on `err` and exit 1,
/// anything else an internal-error line and exit 3. `subject` names what
/// was being worked on, for the out-of-memory message.
int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body);

}  // namespace reachwise::cli
