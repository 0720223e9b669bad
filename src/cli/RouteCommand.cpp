// `reachwise route`: read and validate the network, read the forcing, route
// every reach, write the results. `reachwise demo`: the same on the shipped
// sample network and storm scenario, with a short summary.
#include "RouteCommand.hpp"

#include <fmt/core.h>
#include <fmt/ostream.h>

#include <algorithm>
#include <filesystem>
#include <iostream>
#include <memory>
#include <set>

#include "Common.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::cli {

namespace {

namespace fs = std::filesystem;

struct RouteOptions {
  std::string network, inflow, lateral, layer, config, method = "vpmc", out, csv;
  double dt_s = 0;
  bool write_back = false, overwrite = false, quiet = false, demo = false;
  std::string command_line;
};

/// Serves the io forcing to the scheduler by plan index.
class ForcingAdapter : public routing::ForcingProvider {
public:
  ForcingAdapter(const io::ForcingSource& source, const network::NetworkPlan& plan)
      : source_(source), plan_(plan) {}
  bool inflow(std::uint32_t reach, std::span<double> out) const override {
    return fill(io::ForcingKind::Inflow, reach, out);
  }
  bool lateral(std::uint32_t reach, std::span<double> out) const override {
    return fill(io::ForcingKind::Lateral, reach, out);
  }

private:
  bool fill(io::ForcingKind kind, std::uint32_t reach, std::span<double> out) const {
    thread_local std::vector<double> buf;
    if (!source_.series(kind, plan_.reach_id[reach], buf)) return false;
    std::copy_n(buf.begin(), std::min(buf.size(), out.size()), out.begin());
    return true;
  }
  const io::ForcingSource& source_;
  const network::NetworkPlan& plan_;
};

routing::Method parseMethod(const std::string& m) {
  if (m == "mc") return routing::Method::ConstantParameter;
  if (m == "muskingum") return routing::Method::Muskingum;
  return routing::Method::VariableParameter;
}

std::string hours(double s) { return fmt::format("{:.1f} h", s / 3600.0); }

void printDemoSummary(std::ostream& out, const network::NetworkPlan& plan,
                      const routing::NetworkResults& r, const std::string& gpkg) {
  const int off = r.axis.utc_offset_min;
  fmt::print(out, "reachwise demo: {} reaches, {} steps of {} s from {}\n", plan.size(), r.axis.steps,
             r.axis.dt_s, io::formatIsoTime(r.axis.start_unix_s, off));
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (plan.isOutlet(i))
      fmt::print(out, "outlet {}: peak {:.2f} m3/s at {}\n", plan.reach_id[i], r.reaches[i].peak_q_m3s,
                 io::formatIsoTime(r.reaches[i].peak_time_s, off));
  fmt::print(out, "confluences where branch peaks arrive within one hour of each other:\n");
  int close = 0;
  for (const auto& n : r.nodes) {
    if (n.kind != routing::NodeKind::Confluence || !(n.branch_spread_s <= 3600)) continue;
    ++close;
    fmt::print(out, "  {} (spread {}, combined peak {:.2f} m3/s, coincidence {:.2f})\n", n.node_id,
               hours(n.branch_spread_s), n.peak_q_m3s, n.coincidence_ratio);
  }
  if (!close) fmt::print(out, "  none\n");
  std::vector<std::uint32_t> order(plan.size());
  for (std::uint32_t i = 0; i < plan.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](auto a, auto b) {
    const double x = r.reaches[a].attenuation_pct, y = r.reaches[b].attenuation_pct;
    return (std::isnan(y) ? -1e300 : y) < (std::isnan(x) ? -1e300 : x);
  });
  fmt::print(out, "largest attenuation:\n");
  for (std::size_t k = 0; k < std::min<std::size_t>(5, order.size()); ++k) {
    const auto& s = r.reaches[order[k]];
    fmt::print(out, "  {} {:.1f} % (peak travel time {})\n", plan.reach_id[order[k]], s.attenuation_pct,
               hours(s.travel_time_s));
  }
  const routing::VolumeBalance v = routing::networkVolumeBalance(plan, r);
  fmt::print(out, "volume: {:.0f} m3 in, {:.0f} m3 out, {:.0f} m3 still stored, balance error {:.3f} %\n",
             v.inflow_m3 + v.lateral_m3, v.outflow_m3, v.storage_change_m3, v.error_pct);
  fmt::print(out, "warnings: {}\n", r.warnings.empty() ? "none" : std::to_string(r.warnings.size()));
  for (const auto& w : r.warnings) fmt::print(out, "  {}\n", w);
  fmt::print(out, "open in a GIS: {}\n", gpkg);
  fmt::print(out, "caution: {}\n", io::kResultsCaution);
}

int route(const RouteOptions& o, std::ostream& out, std::ostream& err) {
  const auto net = loadNetwork(o.network, o.layer, o.config);
  const network::ReachTable& table = net->table;
  const network::ProblemList& problems = net->problems;
  if (network::hasErrors(problems)) {
    for (const auto& p : problems)
      if (p.severity == network::Severity::Error) fmt::print(err, "{}\n", problemLine(p));
    fmt::print(err, "route refused: the network has errors (run `reachwise check` for details)\n");
    return kExitInput;
  }
  const network::NetworkPlan plan = net->graph->freeze();

  io::CsvForcingOptions fo;
  if (o.dt_s > 0) fo.dt_s = o.dt_s;
  const io::MemoryForcingSource forcing(io::readForcingCsv(
      o.inflow.empty() ? std::nullopt : std::optional<fs::path>(o.inflow),
      o.lateral.empty() ? std::nullopt : std::optional<fs::path>(o.lateral), fo));
  std::set<std::string, std::less<>> known(plan.reach_id.begin(), plan.reach_id.end());
  io::requireKnownReaches(forcing, known);
  const routing::TimeAxis& axis = forcing.axis();

  // Outputs: a new GeoPackage (temporary name, renamed on success) or
  // prefixed layers in the input GeoPackage.
  io::GpkgWriterOptions wo;
  wo.overwrite = o.overwrite;
  if (plan.size() >= 10000) {
    std::vector<std::uint32_t> pick;
    for (std::uint32_t i = 0; i < plan.size(); ++i)
      if (plan.isOutlet(i) || plan.up_offset[i + 1] - plan.up_offset[i] >= 2) pick.push_back(i);
    wo.series = io::SeriesSelection::of(pick);
  }
  std::unique_ptr<io::GpkgResultsWriter> writer;
  std::string target = o.out;
  if (o.write_back) {
    writer = io::GpkgResultsWriter::writeBack(o.network, "rw_", table, plan, axis, wo);
    target = o.network;
  } else {
    if (target.empty()) target = "reachwise-results.gpkg";
    writer = std::make_unique<io::GpkgResultsWriter>(target, table, plan, axis, wo);
  }

  // --csv: the series stream to both writers.
  std::unique_ptr<io::CsvSeriesWriter> csv_series;
  std::unique_ptr<io::SeriesFanOut> fan_out;
  routing::SeriesSink* sink = writer.get();
  if (!o.csv.empty()) {
    std::error_code ec;
    fs::create_directories(o.csv, ec);
    csv_series = std::make_unique<io::CsvSeriesWriter>(o.csv, o.overwrite, plan, axis, wo.series);
    fan_out = std::make_unique<io::SeriesFanOut>(std::vector<routing::SeriesSink*>{writer.get(), csv_series.get()});
    sink = fan_out.get();
  }

  routing::NetworkRouteOptions ro;
  ro.reach.method = parseMethod(o.method);
  const ForcingAdapter adapter(forcing, plan);
  routing::NetworkResults results = routing::routeNetwork(plan, axis, adapter, ro, sink);
  for (const auto& w : forcing.forcing().warnings) results.warnings.push_back(w);
  for (const auto& p : problems)
    if (p.severity == network::Severity::Warning) results.warnings.push_back(p.code + " " + p.reach_id + ": " + p.message);

  io::RunInfo info;
  info.inputs = {o.network};
  if (!o.inflow.empty()) info.inputs.push_back(o.inflow);
  if (!o.lateral.empty()) info.inputs.push_back(o.lateral);
  if (!o.config.empty()) info.inputs.push_back(o.config);
  info.method = o.method;
  info.command_line = o.command_line;
  info.warnings = results.warnings;
  writer->writeSummaries(results, info);
  if (!o.csv.empty()) {
    io::writeCsvTables(o.csv, o.overwrite, table, plan, results, info);
    csv_series->commit();
  }
  writer->commit();

  if (o.demo) {
    printDemoSummary(out, plan, results, target);
  } else if (!o.quiet) {
    fmt::print(out, "routed {} reaches over {} steps ({}); wrote {}\n", plan.size(), axis.steps, o.method, target);
    for (const auto& w : results.warnings) fmt::print(err, "warning: {}\n", w);
  }
  return kExitOk;
}

int runGuarded(const RouteOptions& o) {
  return guarded(std::cerr, o.network, [&] { return route(o, std::cout, std::cerr); });
}

}  // namespace

void addRouteCommand(CLI::App& app, Runner& chosen, const std::string& command_line) {
  auto o = std::make_shared<RouteOptions>();
  CLI::App* sub = app.add_subcommand("route", "Route inflow hydrographs through a network and write the results");
  sub->add_option("NETWORK", o->network, "Network: any path or connection string GDAL opens as vector data")->required();
  sub->add_option("--inflow", o->inflow, "CSV of discharge entering at the top of named reaches")->required();
  sub->add_option("--lateral", o->lateral, "CSV of lateral inflow along named reaches");
  sub->add_option("--layer", o->layer, "Layer name (default: the only line layer)");
  sub->add_option("--config", o->config, "TOML run file with field mappings and defaults");
  sub->add_option("--method", o->method, "vpmc (default), mc or muskingum")
      ->check(CLI::IsMember({"vpmc", "mc", "muskingum"}));
  sub->add_option("--dt", o->dt_s, "Output/forcing time step, s (default: the inflow file's)")->check(CLI::PositiveNumber);
  sub->add_option("--out", o->out, "Output GeoPackage (default reachwise-results.gpkg)");
  sub->add_option("--csv", o->csv, "Also write the tables as CSV files into this folder");
  sub->add_flag("--write-back", o->write_back, "Write the result layers into the input GeoPackage (prefix rw_)");
  sub->add_flag("--overwrite", o->overwrite, "Replace existing outputs");
  sub->add_flag("--quiet", o->quiet, "Print nothing but errors");
  sub->callback([&chosen, o, command_line] {
    o->command_line = command_line;
    chosen = [o] { return runGuarded(*o); };
  });
}

void addDemoCommand(CLI::App& app, Runner& chosen, const std::string& command_line) {
  auto dir = std::make_shared<std::string>("reachwise-demo");
  CLI::App* sub = app.add_subcommand("demo", "Route the shipped sample network with its storm scenario");
  sub->add_option("--out", *dir, "Output folder (default reachwise-demo)");
  sub->callback([&chosen, dir, command_line] {
    chosen = [dir, command_line] {
      const fs::path sample = REACHWISE_SAMPLE_DIR;
      RouteOptions o;
      o.network = (sample / "network.gpkg").string();
      o.inflow = (sample / "inflow.csv").string();
      o.lateral = (sample / "lateral.csv").string();
      o.demo = true;
      o.overwrite = true;  // the demo folder is ours to refresh
      o.command_line = command_line;
      std::error_code ec;
      fs::create_directories(*dir, ec);
      o.out = (fs::path(*dir) / "demo-results.gpkg").string();
      return runGuarded(o);
    };
  });
}

}  // namespace reachwise::cli
