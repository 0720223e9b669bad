#include "PrepareCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <iostream>
#include <memory>

#include "Common.hpp"
#include "reachwise/run/Prepare.hpp"

namespace reachwise::cli {

namespace {

void printSummary(std::ostream& out, const PrepareOptions& o, const run::PrepareSummary& s) {
  std::size_t errors = 0, warnings = 0;
  for (const auto& p : s.problems) {
    errors += p.severity == network::Severity::Error;
    warnings += p.severity == network::Severity::Warning;
  }
  const std::size_t notes = s.problems.size() - errors - warnings;
  fmt::print(out, "network        {}\n", o.network);
  fmt::print(out, "dem            {}\n", o.dem);
  fmt::print(out, "reaches        {}\n", s.reaches);
  fmt::print(out, "slope          {} from the DEM ({} floored to the minimum), {} from the field, {} default, "
                  "{} missing\n",
             s.slope_from_dem, s.floored, s.slope_from_field, s.slope_from_default, s.slope_missing);
  fmt::print(out, "interpolated   {} reach{} without a DEM profile (elevations from neighbouring reaches)\n",
             s.interpolated, s.interpolated == 1 ? "" : "es");
  fmt::print(out, "nodata         {} reach{} with DEM nodata or outside the raster\n", s.with_nodata,
             s.with_nodata == 1 ? "" : "es");
  if (std::isnan(s.min_slope))
    fmt::print(out, "slope range    -\n");
  else
    fmt::print(out, "slope range    {:.4g} to {:.4g}\n", s.min_slope, s.max_slope);
  fmt::print(out, "bottom widths  {} from hydraulic geometry, {} from the layer", s.width_from_geometry,
             s.width_from_field);
  if (std::isnan(s.min_width_m))
    fmt::print(out, "\n");
  else
    fmt::print(out, "; {:.3g} to {:.3g} m\n", s.min_width_m, s.max_width_m);
  if (!s.width_by_order.empty()) {
    std::string by_order;
    for (const auto& [order, range] : s.width_by_order)
      by_order += fmt::format("{}{}: {:.3g}-{:.3g} m", by_order.empty() ? "" : ", ", order, range.first, range.second);
    fmt::print(out, "width by order {}\n", by_order);
  }
  fmt::print(out, "problems       {} error{}, {} warning{}, {} note{}\n", errors, errors == 1 ? "" : "s",
             warnings, warnings == 1 ? "" : "s", notes, notes == 1 ? "" : "s");
}

int prepare(const PrepareOptions& options, std::ostream& out, std::ostream& err) {
  run::PrepareRequest request;
  request.network = {options.network, options.layer, options.config, ""};
  request.dem = options.dem;
  request.out = options.out;
  request.overwrite = options.overwrite;
  run::PrepareSummary s;
  try {
    s = run::prepare(request);
  } catch (const run::NetworkHasErrors& e) {
    for (const auto& p : e.problems()) fmt::print(err, "{}\n", run::problemLine(p, e.geographic()));
    fmt::print(err, "error: {}; nothing written\n", e.what());
    return kExitInput;
  }
  printSummary(out, options, s);
  for (const auto& p : s.problems)
    if (p.severity != network::Severity::Info) fmt::print(err, "{}\n", run::problemLine(p, s.geographic));
  fmt::print(out, "wrote          {}\n", options.out);
  return s.hasErrors() ? kExitInput : kExitOk;
}

}  // namespace

int runPrepare(const PrepareOptions& options, std::ostream& out, std::ostream& err) {
  return guarded(err, options.network, [&] { return prepare(options, out, err); });
}

void addPrepareCommand(CLI::App& app, Runner& chosen) {
  auto options = std::make_shared<PrepareOptions>();
  CLI::App* sub = app.add_subcommand(
      "prepare", "Derive bed slopes and end elevations from a DEM; write the network as built to a new GeoPackage");
  sub->add_option("NETWORK", options->network, "Network: any path or connection string GDAL opens as vector data")
      ->required();
  sub->add_option("--dem", options->dem, "DEM: any raster GDAL opens (GeoTIFF, VRT, ...), elevations in metres")
      ->required();
  sub->add_option("--config", options->config, "TOML run file ([network] field mappings, [prepare] settings)");
  sub->add_option("--layer", options->layer, "Layer name (default: the only line layer)");
  sub->add_option("--out", options->out, "GeoPackage to write (layers reaches and problems)")->required();
  sub->add_flag("--overwrite", options->overwrite, "Replace --out if it exists");
  sub->callback([&chosen, options] {
    chosen = [options] { return runPrepare(*options, std::cout, std::cerr); };
  });
}

}  // namespace reachwise::cli
