#pragma once
// Pieces every subcommand shares: loading and validating a network, the
// one-line problem format, and turning errors into exit codes.

#include <functional>
#include <iosfwd>
#include <memory>
#include <optional>
#include <string>

#include "reachwise/io/NetworkReader.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::cli {

/// A network as read and validated. Not movable: `graph` refers to `table`.
struct LoadedNetwork {
  io::NetworkConfig config;       ///< as read from --config (or the defaults)
  network::ReachTable table;
  io::ReadSummary read;
  network::ProblemList problems;  ///< reader's and graph's, without repeats
  std::optional<network::ReachGraph> graph;
};

/// A plain path (not a connection string such as "PG:..." nor a GDAL
/// virtual path) that does not exist is an InputError with a plainer
/// message than GDAL's.
void requireExisting(const std::string& source);

/// Reads `source` (with `layer` and the TOML `config`, either may be empty),
/// builds the reach graph and validates it. A plain path that does not
/// exist gets a plain message. Throws reachwise::Error for unreadable input.
std::unique_ptr<LoadedNetwork> loadNetwork(const std::string& source, const std::string& layer,
                                           const std::string& config);

/// `severity code reach_id fid (x, y): sentence` (docs/formats.md).
std::string problemLine(const network::Problem& p);

/// Runs `body`; a reachwise::Error becomes one line on `err` and exit 1,
/// anything else an internal-error line and exit 3. `subject` names what
/// was being worked on, for the out-of-memory message.
int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body);

}  // namespace reachwise::cli
