#pragma once
// `reachwise calibrate NETWORK --inflow FILE [--lateral FILE] --observed FILE
//  [--gauges FILE] --out CALIBRATED.gpkg [...]`: a multiplier on Manning's n
// (or bottom width) per gauged sub-basin, chosen so that the routed outflow
// best matches the gauges, written with the network to a new GeoPackage.

#include <CLI/CLI.hpp>

#include "Subcommand.hpp"

namespace reachwise::cli {

/// Adds the `calibrate` subcommand to `app`.
void addCalibrateCommand(CLI::App& app, Runner& chosen);

}  // namespace reachwise::cli
