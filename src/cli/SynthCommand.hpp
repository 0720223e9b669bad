#pragma once
// `reachwise synth OUT.gpkg --reaches N [--steps T] [--dt SECONDS] [--seed S]
// [--outlets K] [--lateral OUT.nc] [--inflow OUT.csv] [--start ISO8601]
// [--overwrite]`: writes a synthetic network and its storm forcing.

#include <CLI/CLI.hpp>

#include <cstdint>
#include <iosfwd>
#include <string>

#include "Subcommand.hpp"

namespace reachwise::cli {

struct SynthOptions {
  std::string out;                       ///< GeoPackage to write
  std::size_t reaches = 0;
  std::size_t outlets = 1;
  std::size_t lakes = 0;                 ///< lakes to place (layer lakes), 0: none
  std::size_t steps = 720;
  double dt_s = 3600;
  std::uint64_t seed = 1;
  std::string lateral;                   ///< NetCDF to write, empty: none
  std::string inflow;                    ///< CSV to write, empty: none
  std::string start = "2026-05-01T00:00:00Z";
  bool overwrite = false;
  bool quiet = false;
};

/// Returns 0, 1 (an output exists or cannot be written), 2 (bad options) or 3.
int runSynth(const SynthOptions& options, std::ostream& out, std::ostream& err);

void addSynthCommand(CLI::App& app, Runner& chosen);

}  // namespace reachwise::cli
