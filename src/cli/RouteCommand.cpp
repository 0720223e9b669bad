// `reachwise route`: read and validate the network, read the forcing, route
// every reach, write the results. `reachwise demo`: the same on the shipped
// sample network and storm scenario, with a short summary.
#include "RouteCommand.hpp"

#include <fmt/core.h>
#include <fmt/ostream.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <chrono>
#include <filesystem>
#include <iostream>
#include <map>
#include <memory>
#include <set>
#include <thread>

#include "Common.hpp"
#include "Progress.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingFiles.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/io/RouteConfig.hpp"
#include "reachwise/io/SeriesNetcdf.hpp"
#include "reachwise/network/PlanRanking.hpp"
#include "reachwise/report/Report.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/version.hpp"

namespace reachwise::cli {

namespace {

namespace fs = std::filesystem;

struct RouteOptions {
  std::string network, inflow, lateral, layer, config, method = "vpmc", out, csv, series_nc, report;
  std::string hydrographs = "auto";
  double dt_s = 0;
  unsigned threads = 0;
  bool write_back = false, overwrite = false, quiet = false, demo = false;
  std::string command_line;
};

/// Forwards the series of selected plan reaches to a sink that numbers
/// them 0..k-1 in plan order (the NetCDF series file holds only those).
class SelectedSeries final : public routing::SeriesSink {
public:
  SelectedSeries(const std::vector<bool>& mask, routing::SeriesSink& inner) : inner_(inner) {
    position_.assign(mask.size(), kNone);
    std::uint32_t k = 0;
    for (std::size_t i = 0; i < mask.size(); ++i)
      if (mask[i]) position_[i] = k++;
  }
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double> d,
             std::span<const double> v) override {
    if (position_[reach] != kNone) inner_.write(position_[reach], q, d, v);
  }
  bool wants(std::uint32_t reach) const override { return position_[reach] != kNone; }

private:
  static constexpr std::uint32_t kNone = ~0u;
  std::vector<std::uint32_t> position_;
  routing::SeriesSink& inner_;
};

bool flowsIntoConfluence(const network::NetworkPlan& plan, std::uint32_t i) {
  for (std::uint32_t k = plan.down_offset[i]; k < plan.down_offset[i + 1]; ++k) {
    const std::uint32_t d = plan.down_reach[k];
    if (plan.up_offset[d + 1] - plan.up_offset[d] >= 2) return true;
  }
  return false;
}

/// Confluences whose branches `auto` writes on a large network.
constexpr std::size_t kAutoConfluences = 1000;

/// The incoming branches of the `limit` confluences with the largest
/// upstream networks: the main stems, with a count that does not grow
/// with the network (half of all reaches meet at some confluence).
std::vector<bool> mainConfluenceBranches(const network::NetworkPlan& plan, std::size_t limit) {
  std::vector<bool> pick(plan.size(), false);
  const auto main = network::largestFirst(network::confluenceReaches(plan), network::upstreamSize(plan), limit);
  for (const std::uint32_t c : main)
    for (std::uint32_t k = plan.up_offset[c]; k < plan.up_offset[c + 1]; ++k) pick[plan.up_reach[k]] = true;
  return pick;
}

/// `--hydrographs`: comma-separated `all`, `none`, `outlets`, `confluences`
/// (the reaches whose outflow meets another at a confluence: every branch),
/// `auto` (all below 10,000 reaches, else the outlets and the branches of
/// the 1,000 largest confluences) and reach ids. Unknown ids are an error
/// listing them all.
io::SeriesSelection chooseSeries(const std::string& spec, const network::NetworkPlan& plan) {
  const std::uint32_t n = static_cast<std::uint32_t>(plan.size());
  std::vector<bool> pick(n, false);
  std::map<std::string_view, std::uint32_t> by_id;
  std::vector<std::string> unknown;
  auto mark = [&](auto&& wanted) {
    for (std::uint32_t i = 0; i < n; ++i)
      if (wanted(i)) pick[i] = true;
  };
  auto outlets = [&](std::uint32_t i) { return plan.isOutlet(i); };
  auto confluences = [&](std::uint32_t i) { return flowsIntoConfluence(plan, i); };
  std::size_t start = 0;
  while (start <= spec.size()) {
    std::size_t end = spec.find(',', start);
    if (end == std::string::npos) end = spec.size();
    const std::string token = spec.substr(start, end - start);
    start = end + 1;
    if (token.empty() || token == "none") continue;
    if (token == "all" || (token == "auto" && n < 10000)) {
      mark([](std::uint32_t) { return true; });
    } else if (token == "auto") {
      mark(outlets);
      const std::vector<bool> main = mainConfluenceBranches(plan, kAutoConfluences);
      mark([&](std::uint32_t i) { return bool(main[i]); });
    } else if (token == "outlets") {
      mark(outlets);
    } else if (token == "confluences") {
      mark(confluences);
    } else {
      if (by_id.empty())
        for (std::uint32_t i = 0; i < n; ++i) by_id.emplace(plan.reach_id[i], i);
      auto it = by_id.find(token);
      if (it == by_id.end())
        unknown.push_back(token);
      else
        pick[it->second] = true;
    }
  }
  if (!unknown.empty()) {
    InputLocation at;
    at.field = "--hydrographs";
    throw InputError(at, fmt::format("reach ids not in the network: {}", fmt::join(unknown, ", ")));
  }
  std::vector<std::uint32_t> chosen;
  for (std::uint32_t i = 0; i < n; ++i)
    if (pick[i]) chosen.push_back(i);
  return chosen.size() == n ? io::SeriesSelection::all() : io::SeriesSelection::of(std::move(chosen));
}

/// Base flow of each plan reach (the `base_flow` attribute; none = 0).
std::vector<double> baseFlows(const network::ReachTable& table, const network::NetworkPlan& plan) {
  std::vector<double> q(plan.size(), 0.0);
  bool any = false;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const double b = table.reaches[plan.record[i]].base_flow_m3s;
    if (b > 0) q[i] = b, any = true;
  }
  return any ? q : std::vector<double>{};
}


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
                      const routing::NetworkResults& r, const std::string& gpkg,
                      const std::string& report_dir) {
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
  if (!report_dir.empty())
    fmt::print(out, "run report (open in a web browser): {}\n", (fs::path(report_dir) / "index.html").string());
  fmt::print(out, "caution: {}\n", io::kResultsCaution);
}

/// Every output of a run, opened before routing (so that a refused output
/// costs no routing time) and committed only when all of them are written.
struct Outputs {
  Outputs(const RouteOptions& o, const network::ReachTable& table, const network::NetworkPlan& plan,
          const routing::TimeAxis& axis)
      : options(o), table(table), plan(plan), selection(chooseSeries(o.hydrographs, plan)) {
    // A new GeoPackage (temporary name, renamed on success) or prefixed
    // layers in the input GeoPackage; with --series the chosen hydrographs
    // go to NetCDF instead of the GeoPackage table.
    io::GpkgWriterOptions wo;
    wo.overwrite = o.overwrite;
    wo.series = o.series_nc.empty() ? selection : io::SeriesSelection::none();
    if (o.write_back) {
      gpkg = io::GpkgResultsWriter::writeBack(o.network, "rw_", table, plan, axis, wo);
      target = o.network;
    } else {
      target = o.out.empty() ? "reachwise-results.gpkg" : o.out;
      gpkg = std::make_unique<io::GpkgResultsWriter>(target, table, plan, axis, wo);
    }
    sinks.push_back(gpkg.get());
    if (!o.csv.empty()) {
      std::error_code ec;
      fs::create_directories(o.csv, ec);
      csv = std::make_unique<io::CsvSeriesWriter>(o.csv, o.overwrite, plan, axis, selection);
      sinks.push_back(csv.get());
    }
    if (!o.series_nc.empty()) {
      io::refuseExisting(o.series_nc, o.overwrite);
      const std::vector<bool> mask = selection.mask(plan.size());
      std::vector<std::string> ids;
      for (std::size_t i = 0; i < plan.size(); ++i)
        if (mask[i]) ids.push_back(plan.reach_id[i]);
      io::SeriesNetcdfOptions so;
      so.source = fmt::format("reachwise {} ({})", kVersion, kGitHash);
      so.history = o.command_line;
      netcdf = std::make_unique<io::NetcdfSeriesWriter>(o.series_nc, axis, std::move(ids), so);
      netcdf_selected = std::make_unique<SelectedSeries>(mask, *netcdf);
      sinks.push_back(netcdf_selected.get());
    }
    if (!o.report.empty()) {
      io::refuseExisting(o.report, o.overwrite);
      report_series = std::make_unique<report::ReportSeries>(plan, axis);
      sinks.push_back(report_series.get());
    }
    fan_out = std::make_unique<io::SeriesFanOut>(sinks);
  }

  routing::SeriesSink* sink() { return fan_out.get(); }

  /// Writes the summaries and the report, then commits every file; the
  /// report comes first so that a failing report leaves no output behind.
  void commit(const routing::NetworkResults& results, const io::RunInfo& info, bool us_units) {
    gpkg->writeSummaries(results, info);
    if (report_series) {
      const report::ReportInputs ri{table, plan, results, info, target, us_units};
      report::writeReport(options.report, ri, *report_series, options.overwrite);
    }
    if (csv) {
      io::writeCsvTables(options.csv, options.overwrite, table, plan, results, info);
      csv->commit();
    }
    if (netcdf) netcdf->finish();
    gpkg->commit();
  }

  const RouteOptions& options;
  const network::ReachTable& table;
  const network::NetworkPlan& plan;
  const io::SeriesSelection selection;
  std::string target;   ///< the GeoPackage written (the input itself with --write-back)
  std::unique_ptr<io::GpkgResultsWriter> gpkg;
  std::unique_ptr<io::CsvSeriesWriter> csv;
  std::unique_ptr<io::NetcdfSeriesWriter> netcdf;
  std::unique_ptr<SelectedSeries> netcdf_selected;
  std::unique_ptr<report::ReportSeries> report_series;
  std::vector<routing::SeriesSink*> sinks;
  std::unique_ptr<io::SeriesFanOut> fan_out;
};

/// The forcing files, checked: they exist, and name only reaches of the network.
io::OpenedForcing openRunForcing(const RouteOptions& o, const network::NetworkPlan& plan, units::System unit) {
  io::CsvForcingOptions fo;
  if (o.dt_s > 0) fo.dt_s = o.dt_s;
  fo.unit = unit;
  auto optionalPath = [](const std::string& p) { return p.empty() ? std::nullopt : std::optional<fs::path>(p); };
  for (const std::string* f : {&o.inflow, &o.lateral})
    if (!f->empty()) requireExisting(*f);
  io::OpenedForcing opened = io::openForcing(optionalPath(o.inflow), optionalPath(o.lateral), fo);
  const std::set<std::string, std::less<>> known(plan.reach_id.begin(), plan.reach_id.end());
  io::requireKnownReaches(*opened.source, known);
  return opened;
}

io::RunInfo runInfo(const RouteOptions& o, const routing::NetworkResults& results) {
  io::RunInfo info;
  info.inputs = {o.network};
  for (const std::string* f : {&o.inflow, &o.lateral, &o.config})
    if (!f->empty()) info.inputs.push_back(*f);
  info.method = o.method;
  info.command_line = o.command_line;
  info.warnings = results.warnings;
  info.series_file = o.series_nc;
  return info;
}

int route(const RouteOptions& o, std::ostream& out, std::ostream& err) {
  ProgressBar bar("routing", !o.quiet);
  bar.stage("reading " + o.network);
  const auto net = loadNetwork(o.network, o.layer, o.config);
  const network::ReachTable& table = net->table;
  const network::ProblemList& problems = net->problems;
  if (network::hasErrors(problems)) {
    bar.finish();
    for (const auto& p : problems)
      if (p.severity == network::Severity::Error) fmt::print(err, "{}\n", problemLine(p));
    fmt::print(err, "route refused: the network has errors (run `reachwise check` for details)\n");
    return kExitInput;
  }
  const network::NetworkPlan plan = net->graph->freeze();

  bar.stage("reading the forcing");
  const io::OpenedForcing opened = openRunForcing(o, plan, net->config.units);
  const io::ForcingSource& forcing = *opened.source;
  const routing::TimeAxis& axis = forcing.axis();

  Outputs outputs(o, table, plan, axis);
  routing::NetworkRouteOptions ro;
  ro.reach.method = parseMethod(o.method);
  ro.threads = o.threads;
  ro.base_flow_m3s = baseFlows(table, plan);
  ro.progress = [&bar](std::size_t done, std::size_t total) { bar.update(done, total); };
  const ForcingAdapter adapter(forcing, plan);
  const auto t0 = std::chrono::steady_clock::now();
  routing::NetworkResults results = routing::routeNetwork(plan, axis, adapter, ro, outputs.sink());
  const double route_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  bar.stage("writing the results");
  for (const auto& w : opened.warnings) results.warnings.push_back(w);
  for (const auto& p : problems)
    if (p.severity == network::Severity::Warning) results.warnings.push_back(std::string(p.codeName()) + " " + p.reach_id + ": " + p.message);

  const io::RunInfo info = runInfo(o, results);
  outputs.commit(results, info, net->config.units == units::System::USCustomary);
  bar.finish();

  if (o.demo) {
    printDemoSummary(out, plan, results, outputs.target, o.report);
  } else if (!o.quiet) {
    fmt::print(out, "routed {} reaches over {} steps ({}); wrote {}{}{}\n", plan.size(), axis.steps, o.method,
               outputs.target, o.series_nc.empty() ? "" : " and " + o.series_nc,
               o.report.empty() ? "" : "; report " + (fs::path(o.report) / "index.html").string());
    fmt::print(out, "routing took {:.2f} s: {:.1f} M cell updates/s on {} thread(s); at most {} routed "
               "series held at once\n",
               route_s, routing::cellUpdates(results) / std::max(route_s, 1e-9) / 1e6,
               o.threads ? o.threads : std::thread::hardware_concurrency(), results.peak_live_series);
    for (const auto& w : results.warnings) fmt::print(err, "warning: {}\n", w);
  }
  return kExitOk;
}

int runGuarded(const RouteOptions& o) {
  return guarded(std::cerr, o.network, [&] { return route(o, std::cout, std::cerr); });
}

/// Fills what the command line left unset from the run file's `[route]`
/// table (flags win).
void applyRunFile(const CLI::App& sub, RouteOptions& o) {
  if (o.config.empty()) return;
  requireExisting(o.config);
  const io::RouteConfig c = io::RouteConfig::fromFile(o.config);
  auto take = [&](const char* flag, auto& field, const auto& value) {
    if (value && sub.count(flag) == 0) field = *value;
  };
  take("--inflow", o.inflow, c.inflow);
  take("--lateral", o.lateral, c.lateral);
  take("--method", o.method, c.method);
  take("--dt", o.dt_s, c.dt_s);
  take("--out", o.out, c.out);
  take("--csv", o.csv, c.csv);
  take("--series", o.series_nc, c.series);
  take("--report", o.report, c.report);
  take("--hydrographs", o.hydrographs, c.hydrographs);
  take("--threads", o.threads, c.threads);
  take("--write-back", o.write_back, c.write_back);
  take("--overwrite", o.overwrite, c.overwrite);
  take("--quiet", o.quiet, c.quiet);
}

}  // namespace

void addRouteCommand(CLI::App& app, Runner& chosen, const std::string& command_line) {
  auto o = std::make_shared<RouteOptions>();
  CLI::App* sub = app.add_subcommand("route", "Route inflow hydrographs through a network and write the results");
  sub->add_option("NETWORK", o->network, "Network: any path or connection string GDAL opens as vector data")->required();
  sub->add_option("--inflow", o->inflow,
                                  "CSV or NetCDF of discharge entering at the top of named reaches");
  sub->add_option("--lateral", o->lateral, "CSV or NetCDF of lateral inflow along named reaches");
  sub->add_option("--layer", o->layer, "Layer name (default: the only line layer)");
  sub->add_option("--config", o->config,
                  "TOML run file: field mappings and defaults ([network]), any of these options ([route])");
  sub->add_option("--method", o->method, "vpmc (default), mc or muskingum")
      ->check(CLI::IsMember({"vpmc", "mc", "muskingum"}));
  sub->add_option("--dt", o->dt_s, "Output/forcing time step, s (default: the inflow file's)")->check(CLI::PositiveNumber);
  sub->add_option("--out", o->out, "Output GeoPackage (default reachwise-results.gpkg)");
  sub->add_option("--csv", o->csv, "Also write the tables as CSV files into this folder");
  sub->add_flag("--write-back", o->write_back, "Write the result layers into the input GeoPackage (prefix rw_)");
  sub->add_flag("--overwrite", o->overwrite, "Replace existing outputs");
  sub->add_option("--hydrographs", o->hydrographs,
                  "Reaches whose hydrographs are written: comma-separated all, none, outlets, confluences, "
                  "auto (default: all below 10,000 reaches, else outlets and confluences) or reach ids");
  sub->add_option("--series", o->series_nc,
                  "Write the chosen hydrographs to this NetCDF file instead of the GeoPackage table");
  sub->add_option("--report", o->report, "Write an HTML run report with figures into this folder");
  sub->add_option("--threads", o->threads, "Worker threads (default: all cores)")->check(CLI::PositiveNumber);
  sub->add_flag("--quiet", o->quiet, "Print nothing but errors");
  sub->callback([&chosen, o, sub, command_line] {
    o->command_line = command_line;
    chosen = [o, sub] {
      const int loaded = guarded(std::cerr, o->config, [&] {
        applyRunFile(*sub, *o);
        return kExitOk;
      });
      if (loaded != kExitOk) return loaded;
      if (o->inflow.empty() && o->lateral.empty()) {
        fmt::print(std::cerr, "route: give --inflow and/or --lateral (or set them in the run file's [route] "
                              "table)\n");
        return kExitUsage;
      }
      return runGuarded(*o);
    };
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
      o.report = (fs::path(*dir) / "report").string();
      return runGuarded(o);
    };
  });
}

}  // namespace reachwise::cli
