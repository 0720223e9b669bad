#include "CalibrateCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <toml++/toml.h>
#include <memory>

#include "Common.hpp"
#include "Progress.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/CalibrateConfig.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/report/Report.hpp"
#include "reachwise/run/Calibrate.hpp"
#include "reachwise/run/Route.hpp"

namespace reachwise::cli {

namespace {

namespace fs = std::filesystem;

struct CalibrateOptions {
  std::string network, layer, config, inflow, lateral, observed, gauges, gauges_layer, lakes, lakes_layer, out, report;
  std::string method = "vpmc", parameter = "n", objective = "kge";
  double gauge_snap_m = 100, lower = 0.5, upper = 2.0, tolerance = 1e-3;
  std::size_t max_evaluations = 60, min_observations = 10;
  /// Where the bounds came from, for an error naming them: a flag or the run file's key.
  std::string lower_from = "--lower", upper_from = "--upper";
  unsigned threads = 0;
  std::optional<double> dt_s;   ///< unset: the forcing's own step
  double diffusion_below = routing::kDiffusionWaveMinPonce;   ///< route --diffusion-below
  double spread_budget = routing::kGridSpreadBudget;          ///< route --spread-budget
  std::size_t max_steps = io::kDefaultMaxSteps;
  bool overwrite = false;
};

/// Fills what the command line left unset from the run file's
/// `[calibrate]` table (flags win), then checks the bounds as merged.
void applyRunFile(const CLI::App& sub, CalibrateOptions& o) {
  if (!o.config.empty()) {
    run::requireExisting(o.config);
    const io::CalibrateConfig c = io::CalibrateConfig::fromFile(o.config);
    auto take = [&](const char* flag, auto& field, const auto& value) {
      if (value && sub.count(flag) == 0) {
        field = *value;
        return true;
      }
      return false;
    };
    take("--parameter", o.parameter, c.parameter);
    take("--objective", o.objective, c.objective);
    if (take("--lower", o.lower, c.lower)) o.lower_from = "calibrate.lower";
    if (take("--upper", o.upper, c.upper)) o.upper_from = "calibrate.upper";
    take("--max-evaluations", o.max_evaluations, c.max_evaluations);
    take("--tolerance", o.tolerance, c.tolerance);
    take("--min-observations", o.min_observations, c.min_observations);
    take("--max-steps", o.max_steps, c.max_steps);
  }
  if (!(o.lower < o.upper)) {
    InputLocation where;
    if (o.lower_from != "--lower" || o.upper_from != "--upper") where.file = o.config;
    where.field = o.lower_from;
    throw InputError(where, fmt::format("the lower bound {} ({}) must be below the upper bound {} ({})", o.lower,
                                        o.lower_from, o.upper, o.upper_from));
  }
}

/// The run file beside the output that routes the calibrated network as
/// calibrate routed it: `OUT.toml` for `OUT.gpkg`.
fs::path runFileFor(const std::string& out) { return fs::path(out).replace_extension(".toml"); }

/// Writes the run file (absolute paths; TOML quoting by toml++).
void writeRunFile(const CalibrateOptions& o, const run::CalibrationResult& result, io::OutputCommit& into) {
  const auto absolute = [](const std::string& p) { return p.empty() ? p : fs::absolute(p).string(); };
  toml::table route;
  if (!o.inflow.empty()) route.insert("inflow", absolute(o.inflow));
  if (!o.lateral.empty()) route.insert("lateral", absolute(o.lateral));
  route.insert("method", o.method);
  route.insert("diffusion_below", o.diffusion_below);
  route.insert("spread_budget", o.spread_budget);
  if (o.dt_s) route.insert("dt", *o.dt_s);
  // The calibrated network is SI (a prepared network); its run's outputs
  // stay in the units of the network calibrated.
  if (result.network->config.units == units::System::USCustomary) route.insert("units", "us");
  toml::table file{{"route", route}};
  toml::table network;
  if (const auto& lakes = result.network->lakes) {
    network.insert("lakes", absolute(lakes->source));
    network.insert("lakes_layer", lakes->layer);
  }
  // The forcing and observations stay in the units they were calibrated with.
  if (result.network->config.forcingUnits() == units::System::USCustomary) network.insert("forcing_units", "us");
  if (!network.empty()) file.insert("network", network);
  io::writeStaged(runFileFor(o.out), ".toml", [&](const fs::path& partial) {
    std::ofstream f(partial);
    f << "# Routes the calibrated network as `reachwise calibrate` routed it:\n"
      << "#   reachwise route " << fs::absolute(o.out).string() << " --config " << fs::absolute(runFileFor(o.out)).string()
      << "\n\n"
      << file << "\n";
    if (!f) {
      InputLocation at;
      at.file = runFileFor(o.out).string();
      throw InputError(at, "cannot write the run file");
    }
  }, into);
}

/// What the multiplier multiplies, for the console.
std::string what(const std::string& parameter) {
  if (parameter == "width") return "the bottom width";
  if (parameter == "kx") return "Muskingum K (and X fitted itself)";
  return "Manning's n";
}

/// Routes the calibrated network as its run file says, with the report
/// (and nothing else) as output; the report compares before and after.
void writeCalibrationReport(const CalibrateOptions& o, const run::CalibrateRequest& request,
                            const run::CalibrationResult& result) {
  report::CalibrationComparison c;
  c.what = what(o.parameter);
  c.rows = run::calibrationRows(result, request.settings);
  c.left_out = result.left_out;
  const auto& gauges = result.gauges.gauges;
  for (std::size_t g = 0; g < gauges.size(); ++g) {
    c.gauge_ids.push_back(gauges[g].gauge_id);
    c.before.push_back(result.scores_before[g]);
    c.outflow_before.push_back(result.outflow_before[g]);
  }
  run::RouteRequest route;
  route.network = {o.out, "", runFileFor(o.out).string(), ""};
  route.forcing = request.forcing;
  route.method = request.method;
  route.diffusion_below_ponce = request.diffusion_below_ponce;
  route.grid_spread_budget = request.grid_spread_budget;
  route.threads = request.threads;
  route.gauges = request.gauges;
  route.outputs.report_dir = o.report;
  route.outputs.units = result.network->config.units;  // as the run file routes it (writeRunFile)
  route.outputs.overwrite = o.overwrite;
  route.outputs.calibration = &c;
  route.command_line = fmt::format("reachwise route {} --config {} (the run `reachwise calibrate` wrote)", o.out,
                                   runFileFor(o.out).string());
  (void)run::route(route);
}

int calibrate(const CalibrateOptions& o, std::ostream& out, std::ostream& err) {
  // Before any routing: neither output replaces an input, nor an existing
  // file without --overwrite.
  io::refuseOutputOverInput({{"--out", o.out},
                             {"--out (its run file)", runFileFor(o.out)},
                             {"--report", o.report, true}},
                            {{"NETWORK", o.network}, {"--config", o.config}, {"--inflow", o.inflow},
                             {"--lateral", o.lateral}, {"--observed", o.observed}, {"--gauges", o.gauges},
                             {"--lakes", o.lakes}});
  io::refuseExisting(o.out, o.overwrite);
  io::requireParentFolder(o.out);
  io::refuseExisting(runFileFor(o.out), o.overwrite);
  if (!o.report.empty()) io::refuseExisting(o.report, o.overwrite);
  run::CalibrateRequest request;
  request.network = {o.network, o.layer, o.config, ""};
  request.network.lakes = o.lakes;
  request.network.lakes_layer = o.lakes_layer;
  request.forcing.inflow = o.inflow;
  request.forcing.lateral = o.lateral;
  request.forcing.dt_s = o.dt_s;
  request.forcing.max_steps = o.max_steps;
  request.gauges = {o.observed, o.gauges, o.gauges_layer, o.gauge_snap_m};
  request.method = *run::methodFromName(o.method);
  request.diffusion_below_ponce = o.diffusion_below;
  request.grid_spread_budget = o.spread_budget;
  request.threads = o.threads;
  auto& s = request.settings;
  s.parameter = o.parameter == "width" ? run::CalibrationParameter::Width
                : o.parameter == "kx"  ? run::CalibrationParameter::MuskingumKX
                                       : run::CalibrationParameter::Roughness;
  s.objective = o.objective == "nse"        ? run::Objective::Nse
                : o.objective == "nse_peak" ? run::Objective::PeakWeightedNse
                                            : run::Objective::Kge;
  s.lower = o.lower;
  s.upper = o.upper;
  s.max_evaluations = o.max_evaluations;
  s.tolerance = o.tolerance;
  s.min_observations = o.min_observations;
  fmt::print(out, "calibrating a multiplier on {} per gauged sub-basin, upstream first ({} in [{}, {}], "
                  "objective {}, at most {} routings each)\n",
             what(o.parameter), o.parameter, o.lower, o.upper, o.objective,
             o.max_evaluations);
  ProgressBar bar("calibrating", true);
  request.on_routing = [&bar](std::size_t done, std::size_t most) { bar.update(done, most); };
  request.on_sub_basin = [&](const run::SubBasinResult& sb) {
    bar.finish();
    fmt::print(out, "  gauge {} on {}: {} reaches, multiplier {:.3f}{}{}; {} {:.3f} -> {:.3f} (NSE {:.3f} -> {:.3f}), "
                    "{} routings\n",
               sb.gauge_id, sb.reach_id, sb.reaches.size(), sb.multiplier,
               std::isnan(sb.muskingum_x) ? std::string() : fmt::format(", X {:.3f}", sb.muskingum_x),
               sb.at_bound ? " (at a bound)" : "",
               o.objective, run::objectiveScore(s.objective, sb.before), run::objectiveScore(s.objective, sb.after),
               sb.before.nse, sb.after.nse, sb.evaluations);
  };
  run::CalibrationResult result;
  try {
    result = run::calibrate(request);
    bar.finish();
  } catch (const run::NetworkHasErrors& e) {
    bar.finish();
    for (const auto& p : e.problems())
      if (p.severity == network::Severity::Error) fmt::print(err, "{}\n", run::problemLine(p, e.geographic()));
    fmt::print(err, "calibrate refused: the network has errors (run `reachwise check` for details)\n");
    return kExitInput;
  }
  for (const auto& why : result.left_out) fmt::print(out, "  left out: {}\n", why);
  if (result.uncalibrated_reaches)
    fmt::print(out, "  {} reach(es) below every calibrated gauge keep their {}\n", result.uncalibrated_reaches,
               what(o.parameter));
  // The calibrated network and its run file appear together or not at all.
  io::OutputCommit both(o.overwrite);
  run::writeCalibrated(o.out, o.overwrite, result, s, &both);
  writeRunFile(o, result, both);
  both.commit();
  for (const auto& note : both.recoveredNotes()) fmt::print(err, "{}\n", note);
  fmt::print(out, "{} routings in all; wrote {} (layers reaches, calibration, gauges, problems)\n",
             result.evaluations, o.out);
  if (!o.report.empty()) {
    writeCalibrationReport(o, request, result);
    fmt::print(out, "wrote the report of the calibrated run, before and after: {}\n",
               (fs::path(o.report) / "index.html").string());
  }
  fmt::print(out, "route it as calibrated: reachwise route {} --config {}\n", o.out, runFileFor(o.out).string());
  for (const auto& w : result.gauges.warnings) fmt::print(err, "warning: {}\n", w);
  fmt::print(out, "caution: {}\n", run::kResultsCaution);
  return kExitOk;
}

}  // namespace

void addCalibrateCommand(CLI::App& app, Runner& chosen) {
  auto o = std::make_shared<CalibrateOptions>();
  CLI::App* sub = app.add_subcommand(
      "calibrate", "Fit a multiplier on Manning's n (or bottom width) per gauged sub-basin to observed hydrographs");
  sub->add_option("NETWORK", o->network, "Network: any path or connection string GDAL opens as vector data")
      ->required();
  sub->add_option("--inflow", o->inflow, "CSV or NetCDF of discharge entering at the top of named reaches");
  sub->add_option("--lateral", o->lateral, "CSV or NetCDF of lateral inflow along named reaches");
  sub->add_option("--observed", o->observed,
                  "CSV or NetCDF of observed discharge keyed by reach id, or by gauge id with --gauges")
      ->required();
  sub->add_option("--gauges", o->gauges, "Gauges: a point source with gauge_id and optional reach_id");
  sub->add_option("--gauges-layer", o->gauges_layer, "Layer of the gauges (default: the only point layer)");
  sub->add_option("--gauge-snap", o->gauge_snap_m, "Largest distance from a gauge to its reach, metres (default 100)")
      ->check(CLI::PositiveNumber);
  sub->add_option("--out", o->out, "GeoPackage to write: the calibrated network and what was fitted")->required();
  sub->add_option("--layer", o->layer, "Layer name (default: the only line layer)");
  sub->add_option("--config", o->config,
                  "TOML run file ([network] field mappings and settings, [calibrate] settings; flags win)");
  sub->add_option("--lakes", o->lakes, "Lakes and reservoirs: a polygon source");
  sub->add_option("--lakes-layer", o->lakes_layer, "Layer of the lakes (default: the only polygon layer)");
  sub->add_option("--method", o->method, "Routing method (default vpmc)")
      ->check(CLI::IsMember(run::methodNames()));
  addVpmcOptions(*sub, o->diffusion_below, o->spread_budget);
  sub->add_option("--parameter", o->parameter, "What is fitted: n (Manning's n, default), width, or kx (Muskingum K and X, with --method muskingum)")
      ->check(CLI::IsMember({"n", "width", "kx"}));
  sub->add_option("--objective", o->objective, "kge (default), nse or nse_peak (peak-weighted NSE)")
      ->check(CLI::IsMember({"kge", "nse", "nse_peak"}));
  sub->add_option("--lower", o->lower, "Lowest multiplier (default 0.5)")->check(CLI::PositiveNumber);
  sub->add_option("--upper", o->upper, "Highest multiplier (default 2)")->check(CLI::PositiveNumber);
  sub->add_option("--max-evaluations", o->max_evaluations, "Routings per sub-basin (default 60)")
      ->check(CLI::Range(4, 100000));
  sub->add_option("--tolerance", o->tolerance,
                  "Step in log multiplier at which the search stops (default 0.001)")
      ->check(CLI::PositiveNumber);
  sub->add_option("--min-observations", o->min_observations,
                  "Fewest observations within the run for a gauge to be calibrated (default 10)")
      ->check(CLI::Range(1, 1000000000));
  sub->add_option("--dt", o->dt_s, "Time step to resample CSV forcing to, s (default: the inflow file's)")
      ->check(timeStepCheck());
  sub->add_option("--max-steps", o->max_steps,
                  fmt::format("Most time steps the run may have (default {})", io::kDefaultMaxSteps))
      ->check(CLI::Range(std::size_t{2}, kMostSteps));
  sub->add_option("--threads", o->threads, threadsHelp())->check(CLI::Range(1u, kMostThreads));
  sub->add_option("--report", o->report,
                  "Folder for an HTML report of the calibrated run, comparing the gauges before and after");
  sub->add_flag("--overwrite", o->overwrite, "Replace --out (and --report) if they exist");
  sub->callback([&chosen, o, sub] {
    chosen = [o, sub] {
      const int loaded = guarded(std::cerr, o->config, [&] {
        applyRunFile(*sub, *o);
        return kExitOk;
      });
      if (loaded != kExitOk) return loaded;
      return guarded(std::cerr, o->network, [&] { return calibrate(*o, std::cout, std::cerr); });
    };
  });
}

}  // namespace reachwise::cli
