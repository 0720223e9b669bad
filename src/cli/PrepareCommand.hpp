#pragma once
// `reachwise prepare NETWORK --dem DEM [--config RUN.toml] [--layer NAME]
//  --out PREPARED.gpkg [--overwrite]`: bed slopes and end elevations from a
// DEM, written with the network as built to a GeoPackage that routes as it is.

#include <CLI/CLI.hpp>

#include <iosfwd>
#include <string>

#include "Subcommand.hpp"

namespace reachwise::cli {

struct PrepareOptions {
  std::string network;  ///< path or connection string
  std::string dem;      ///< raster
  std::string config;   ///< TOML run file ([network] and [prepare]), empty: defaults
  std::string layer;    ///< empty: the only line layer
  std::string out;      ///< GeoPackage to write
  bool overwrite = false;
};

/// Runs prepare; summary to `out`, problems (one per line) to `err`.
/// Returns 0 (written, no errors), 1 (the input has errors or cannot be
/// read; when the output was written it says so) or 3. Never throws.
int runPrepare(const PrepareOptions& options, std::ostream& out, std::ostream& err);

/// Adds the `prepare` subcommand to `app`.
void addPrepareCommand(CLI::App& app, Runner& chosen);

}  // namespace reachwise::cli
