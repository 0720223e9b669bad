// `reachwise route`: read and validate the network, read the forcing, route
// every reach, write the results. `reachwise demo`: the same on the shipped
// sample network and storm scenario, with a short summary.
#include "RouteCommand.hpp"

#include <sys/resource.h>

#include <fmt/core.h>
#include <fmt/ostream.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>
#include <string_view>
#include <vector>

#include "Common.hpp"
#include "Progress.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/Database.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputUnits.hpp"
#include "reachwise/io/RouteConfig.hpp"
#include "reachwise/run/Ensemble.hpp"
#include "reachwise/run/Route.hpp"

namespace reachwise::cli {

namespace {

namespace fs = std::filesystem;

struct RouteOptions {
  std::string network, inflow, lateral, members, layer, config, method = "vpmc", out, csv, series_nc, report, report_reaches;
  std::string hydrographs = "auto";
  std::string units;   ///< "si" or "us"; empty: the network's input units
  std::string lakes, lakes_layer;
  std::string save_state, initial_state;
  std::string observed, gauges, gauges_layer;
  double gauge_snap_m = 100;
  std::optional<double> dt_s;   ///< unset: the forcing's own step
  double diffusion_below = routing::kDiffusionWaveMinPonce;
  double spread_budget = routing::kGridSpreadBudget;
  unsigned threads = 0;
  std::size_t max_steps = io::kDefaultMaxSteps;
  std::size_t max_hydrograph_rows = run::kDefaultMaxHydrographRows;
  bool write_back = false, overwrite = false, quiet = false, demo = false, timings = false;
  std::string schema;           ///< of results in a database (--out PG:...)
  std::string command_line;
  routing::Ranks* ranks = nullptr;   ///< MPI ranks routing together; null: alone
  /// Rank 0 (or a process alone) speaks; the other ranks print nothing.
  bool speaks() const { return !ranks || ranks->rank() == 0; }
};

/// Where a rank that does not speak writes: nowhere.
std::ostream& silenced() {
  static std::ostream none(nullptr);
  return none;
}

std::string hours(double s) { return fmt::format("{:.1f} h", s / 3600.0); }

/// An SI value in the run's output units, and that unit for the console.
struct ConsoleUnits {
  units::System system = units::System::SI;
  double q(double m3s) const { return io::toOutputUnits(system, io::Quantity::Discharge, m3s); }
  double len(double m) const { return io::toOutputUnits(system, io::Quantity::Length, m); }
  double vol(double m3) const { return io::toOutputUnits(system, io::Quantity::Volume, m3); }
  std::string_view q_unit() const { return io::unitAscii(system, io::Quantity::Discharge); }
  std::string_view len_unit() const { return io::unitAscii(system, io::Quantity::Length); }
  std::string_view vol_unit() const { return io::unitAscii(system, io::Quantity::Volume); }
};

/// Gauges listed by name in the console summary; the rest are counted.
constexpr std::size_t kGaugesListed = 10;

/// One line per gauge, worst KGE first (a gauge without a score last), at
/// most kGaugesListed, then how many more.
void printGauges(std::ostream& out, const run::RouteSummary& s) {
  const auto& gauges = s.gauges.gauges;
  if (gauges.empty()) return;
  std::vector<std::size_t> order(gauges.size());
  for (std::size_t g = 0; g < order.size(); ++g) order[g] = g;
  const auto key = [&](std::size_t g) {
    const double k = s.gauge_scores[g].kge;
    return std::isnan(k) ? INFINITY : k;
  };
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return key(a) < key(b); });
  fmt::print(out, "gauges: {} compared, worst KGE first:\n", gauges.size());
  for (std::size_t k = 0; k < order.size() && k < kGaugesListed; ++k) {
    const auto& g = gauges[order[k]];
    const auto& sc = s.gauge_scores[order[k]];
    fmt::print(out, "  gauge {} on {}: NSE {:.3f}, KGE {:.3f} (r {:.2f}, alpha {:.2f}, beta {:.2f}), bias {:+.1f} %, "
               "peak {:+.1f} %, timing {:+.1f} h, {} observations\n",
               g.gauge_id, g.reach_id, sc.nse, sc.kge, sc.kge_r, sc.kge_alpha, sc.kge_beta, sc.pbias_pct,
               sc.peak_error_pct, sc.peak_timing_h, sc.n_obs);
  }
  if (order.size() > kGaugesListed)
    fmt::print(out, "  ... and {} more gauge(s), all in the gauges layer\n", order.size() - kGaugesListed);
}

/// Lakes listed by name in the console summary; the rest are counted.
constexpr std::size_t kLakesListed = 10;

/// One line per routed lake, largest attenuation first (ties and lakes
/// without inflow: by id), at most kLakesListed, then how many more.
void printLakes(std::ostream& out, const std::vector<io::LakeOutput>& lakes, const routing::TimeAxis& axis,
                const ConsoleUnits& u) {
  if (lakes.empty()) return;
  struct Line {
    const std::string* id;
    io::LakeFigures f;
  };
  std::vector<Line> lines;
  for (const auto& lake : lakes) lines.push_back({&lake.lake->lake_id, io::lakeFigures(*lake.routing, axis)});
  std::sort(lines.begin(), lines.end(), [](const Line& a, const Line& b) {
    const double x = std::isnan(a.f.attenuation_pct) ? -INFINITY : a.f.attenuation_pct;
    const double y = std::isnan(b.f.attenuation_pct) ? -INFINITY : b.f.attenuation_pct;
    return x != y ? x > y : *a.id < *b.id;
  });
  fmt::print(out, "lakes: {} routed, largest attenuation first:\n", lines.size());
  for (std::size_t k = 0; k < std::min(kLakesListed, lines.size()); ++k) {
    const io::LakeFigures& f = lines[k].f;
    const std::string attenuation =
        std::isnan(f.attenuation_pct) ? std::string("no inflow") : fmt::format("attenuation {:.1f} %", f.attenuation_pct);
    fmt::print(out, "  lake {}: peak {:.2f} -> {:.2f} {}, {}, lag {}, peak level {:.2f} {}\n", *lines[k].id,
               u.q(f.inflow_peak_m3s), u.q(f.outflow_peak_m3s), u.q_unit(), attenuation, hours(f.lag_s),
               u.len(f.peak_level_m), u.len_unit());
  }
  if (lines.size() > kLakesListed)
    fmt::print(out, "  ... and {} more lake(s), all in the lakes layer\n", lines.size() - kLakesListed);
}

/// Outlets and coinciding confluences listed by name; the rest are counted.
constexpr std::size_t kNodesListed = 10;
/// Examples printed per kind of warning.
constexpr std::size_t kWarningExamples = 1;

/// The outlets, largest peak first, at most kNodesListed, then how many more.
void printOutlets(std::ostream& out, const run::RouteSummary& s, const ConsoleUnits& u) {
  const network::NetworkPlan& plan = s.plan;
  const routing::NetworkResults& r = s.results;
  std::vector<std::uint32_t> outlets;
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (plan.isOutlet(i)) outlets.push_back(i);
  std::stable_sort(outlets.begin(), outlets.end(), [&](std::uint32_t a, std::uint32_t b) {
    return r.reaches[a].peak_q_m3s > r.reaches[b].peak_q_m3s;
  });
  if (outlets.size() > 1) fmt::print(out, "outlets: {}, largest peak first:\n", outlets.size());
  const int off = r.axis.utc_offset_min;
  for (std::size_t k = 0; k < outlets.size() && k < kNodesListed; ++k)
    fmt::print(out, "{}outlet {}: peak {:.2f} {} at {}\n", outlets.size() > 1 ? "  " : "",
               plan.reach_id[outlets[k]], u.q(r.reaches[outlets[k]].peak_q_m3s), u.q_unit(),
               io::formatIsoTime(r.reaches[outlets[k]].peak_time_s, off));
  if (outlets.size() > kNodesListed)
    fmt::print(out, "  ... and {} more outlet(s), all in the nodes layer\n", outlets.size() - kNodesListed);
}

/// Confluences whose branch peaks arrive within one hour of each other,
/// largest combined peak first, at most kNodesListed, then how many more.
void printCoinciding(std::ostream& out, const routing::NetworkResults& r, const ConsoleUnits& u) {
  std::vector<const routing::NodeSummary*> close;
  for (const auto& n : r.nodes)
    if (n.kind == routing::NodeKind::Confluence && n.branch_spread_s <= 3600) close.push_back(&n);
  std::stable_sort(close.begin(), close.end(), [](const auto* a, const auto* b) { return a->peak_q_m3s > b->peak_q_m3s; });
  fmt::print(out, "confluences where branch peaks arrive within one hour of each other: {}\n",
             close.empty() ? std::string("none") : std::to_string(close.size()) + ", largest combined peak first");
  for (std::size_t k = 0; k < close.size() && k < kNodesListed; ++k)
    fmt::print(out, "  {} (spread {}, combined peak {:.2f} {}, coincidence {:.2f})\n", close[k]->node_id,
               hours(close[k]->branch_spread_s), u.q(close[k]->peak_q_m3s), u.q_unit(), close[k]->coincidence_ratio);
  if (close.size() > kNodesListed)
    fmt::print(out, "  ... and {} more, all in the nodes layer (branch_spread_h)\n", close.size() - kNodesListed);
}

void printVolume(std::ostream& out, const routing::VolumeBalance& v, const ConsoleUnits& u) {
  fmt::print(out, "volume: {:.0f} {} in, {:.0f} {} out, {:.0f} {} still stored, balance error {:.3f} % of all inflow",
             u.vol(v.inflow_m3 + v.lateral_m3), u.vol_unit(), u.vol(v.outflow_m3), u.vol_unit(),
             u.vol(v.storage_change_m3), u.vol_unit(), v.error_pct);
  if (std::isnan(v.event_error_pct)) fmt::print(out, " (no volume above the initial flow)\n");
  else fmt::print(out, ", {:.3f} % of the event volume above the initial flow\n", v.event_error_pct);
}

/// The kind of a warning: its leading code (`split_line R7: ...`,
/// `cut_line_forcing L3: ...`), else the warning itself (a run-wide
/// warning is a kind of its own).
std::string_view warningKind(std::string_view w) {
  const auto space = w.find(' ');
  if (space == std::string_view::npos || space == 0) return w;
  const std::string_view head = w.substr(0, space);
  const bool code = head.find('_') != std::string_view::npos &&
                    std::all_of(head.begin(), head.end(), [](char c) { return (c >= 'a' && c <= 'z') || c == '_' || (c >= '0' && c <= '9'); });
  return code ? head : w;
}

/// Warnings grouped by kind, the most frequent first (then in the order
/// first met): a kind met once is printed whole; a kind met several times
/// as its count and one example. Every warning stays in run_info.
void printWarnings(std::ostream& out, const std::vector<std::string>& warnings, const char* prefix) {
  struct Kind {
    std::string_view name;
    std::vector<const std::string*> items;
  };
  std::vector<Kind> kinds;
  for (const auto& w : warnings) {
    const std::string_view k = warningKind(w);
    auto it = std::find_if(kinds.begin(), kinds.end(), [&](const Kind& x) { return x.name == k; });
    if (it == kinds.end()) it = kinds.insert(kinds.end(), Kind{k, {}});
    it->items.push_back(&w);
  }
  std::stable_sort(kinds.begin(), kinds.end(), [](const Kind& a, const Kind& b) { return a.items.size() > b.items.size(); });
  for (const Kind& k : kinds) {
    if (k.items.size() == 1) {
      fmt::print(out, "{}{}\n", prefix, *k.items.front());
      continue;
    }
    fmt::print(out, "{}{} x {}, e.g.:\n", prefix, k.items.size(), k.name);
    for (std::size_t e = 0; e < kWarningExamples; ++e) fmt::print(out, "{}  {}\n", prefix, *k.items[e]);
  }
  if (kinds.size() < warnings.size())
    fmt::print(out, "{}all {} warnings are in the run_info table{}\n", prefix, warnings.size(),
               "; the network's also with `reachwise check NETWORK --problems FILE`");
}

/// What a run did, for a person: outlet peaks, coinciding confluences,
/// attenuation, lakes, gauges, the volume balance and the warnings by kind.
void printRunSummary(std::ostream& out, std::ostream& err, const run::RouteSummary& s,
                     const std::vector<io::LakeOutput>& lakes, const RouteOptions& o) {
  const network::NetworkPlan& plan = s.plan;
  const routing::NetworkResults& r = s.results;
  const int off = r.axis.utc_offset_min;
  const ConsoleUnits u{s.info.units};
  fmt::print(out, "{} {} reaches over {} steps of {} s from {} ({})\n", o.demo ? "reachwise demo:" : "routed",
             plan.size(), r.axis.steps, r.axis.dt_s, io::formatIsoTime(r.axis.start_unix_s, off), o.method);
  fmt::print(out, "output units: {} (discharge {}, lengths {}, volumes {}), in every output\n",
             s.info.units == units::System::USCustomary ? "us, US customary" : "si, SI", u.q_unit(), u.len_unit(),
             u.vol_unit());
  if (!o.demo)
    fmt::print(out, "routing took {:.2f} s: {:.1f} M cell updates/s on {} thread(s); at most {} routed "
               "series held at once\n",
               s.routing_s, r.cell_updates / std::max(s.routing_s, 1e-9) / 1e6, r.threads, r.peak_live_series);
  printOutlets(out, s, u);
  printCoinciding(out, r, u);
  std::vector<std::uint32_t> order(plan.size());
  for (std::uint32_t i = 0; i < plan.size(); ++i) order[i] = i;
  const std::size_t shown = std::min<std::size_t>(5, order.size());  // only these need ordering
  std::partial_sort(order.begin(), order.begin() + static_cast<std::ptrdiff_t>(shown), order.end(),
                    [&](auto a, auto b) {
                      const double x = r.reaches[a].attenuation_pct, y = r.reaches[b].attenuation_pct;
                      return (std::isnan(y) ? -1e300 : y) < (std::isnan(x) ? -1e300 : x);
                    });
  fmt::print(out, "largest attenuation:\n");
  for (std::size_t k = 0; k < shown; ++k) {
    const auto& a = r.reaches[order[k]];
    fmt::print(out, "  {} {:.1f} % (peak travel time {})\n", plan.reach_id[order[k]], a.attenuation_pct,
               hours(a.travel_time_s));
  }
  printLakes(out, lakes, r.axis, u);
  printGauges(out, s);
  printVolume(out, r.volume, u);
  if (o.demo) {
    fmt::print(out, "warnings: {}\n", r.warnings.empty() ? "none" : std::to_string(r.warnings.size()));
    printWarnings(out, r.warnings, "  ");
  } else {
    printWarnings(err, r.warnings, "warning: ");
  }
  fmt::print(out, "{}{}{}{}\n", o.demo ? "open in a GIS: " : "wrote ", s.gpkg,
             o.series_nc.empty() ? "" : " and " + o.series_nc,
             o.save_state.empty() ? "" : "; the end state to " + o.save_state);
  if (!o.report.empty())
    fmt::print(out, "run report (open in a web browser): {}\n", (fs::path(o.report) / "index.html").string());
  fmt::print(out, "caution: {}\n", run::kResultsCaution);
}

/// Wall and CPU time of each stage of a run (`--timings`): the stages the
/// run names (run::Progress::stage) split the time from the start to the
/// end, so the stages add up to the total. CPU time is the process's (all
/// threads), from getrusage(2), with the peak resident memory.
class StageTimes {
public:
  StageTimes() { mark("checking the request"); }
  void mark(std::string_view what) {
    close();
    stages_.push_back({std::string(what), Clock::now(), cpuSeconds(), 0, 0});
  }
  void print(std::ostream& out) {
    close();
    if (stages_.empty()) return;
    double wall = 0, cpu = 0;
    fmt::print(out, "timings (wall s, CPU s of all threads):\n");
    for (const Stage& st : stages_) {
      fmt::print(out, "  {:<48} {:9.3f} {:9.3f}\n", st.name, st.wall_s, st.cpu_s);
      wall += st.wall_s;
      cpu += st.cpu_s;
    }
    rusage u{};
    ::getrusage(RUSAGE_SELF, &u);
    fmt::print(out, "  {:<48} {:9.3f} {:9.3f}\n", "total", wall, cpu);
    fmt::print(out, "  peak resident memory {:.0f} MB\n", static_cast<double>(u.ru_maxrss) / 1024.0);
    stages_.clear();
  }

private:
  using Clock = std::chrono::steady_clock;
  struct Stage {
    std::string name;
    Clock::time_point start;
    double cpu_start, wall_s, cpu_s;
  };
  static double cpuSeconds() {
    rusage u{};
    ::getrusage(RUSAGE_SELF, &u);
    return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
           static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec) * 1e-6;
  }
  void close() {
    if (stages_.empty() || closed_ == stages_.size()) return;
    Stage& last = stages_.back();
    last.wall_s = std::chrono::duration<double>(Clock::now() - last.start).count();
    last.cpu_s = cpuSeconds() - last.cpu_start;
    closed_ = stages_.size();
  }
  std::vector<Stage> stages_;
  std::size_t closed_ = 0;
};

/// Draws the run's stages and routing progress on the terminal, and times
/// the stages.
class BarProgress final : public run::Progress {
public:
  explicit BarProgress(bool enabled) : bar_("routing", enabled) {}
  void stage(std::string_view what) override {
    times_.mark(what);
    bar_.stage(std::string(what));
  }
  void routed(std::size_t done, std::size_t total) override { bar_.update(done, total); }
  void finish() { bar_.finish(); }
  StageTimes& times() { return times_; }

private:
  ProgressBar bar_;
  StageTimes times_;
};

run::RouteRequest requestOf(const RouteOptions& o) {
  run::RouteRequest r;
  r.network = {o.network, o.layer, o.config, ""};
  r.network.lakes = o.lakes;
  r.network.lakes_layer = o.lakes_layer;
  r.gauges = {o.observed, o.gauges, o.gauges_layer, o.gauge_snap_m};
  r.forcing.inflow = o.inflow;
  r.forcing.lateral = o.lateral;
  r.members = o.members;
  r.forcing.dt_s = o.dt_s;
  r.forcing.max_steps = o.max_steps;
  r.max_hydrograph_rows = o.max_hydrograph_rows;
  r.method = *run::methodFromName(o.method);  // CLI11 and the run file admit only the method names
  r.diffusion_below_ponce = o.diffusion_below;
  r.grid_spread_budget = o.spread_budget;
  r.threads = o.threads;
  r.command_line = o.command_line;
  r.initial_state = o.initial_state;
  r.ranks = o.ranks;
  run::OutputRequest& out = r.outputs;
  out.state_nc = o.save_state;
  out.write_back = o.write_back;
  if (!o.write_back) out.gpkg = o.out.empty() ? "reachwise-results.gpkg" : o.out;
  out.schema = o.schema;
  out.csv_dir = o.csv;
  out.series_nc = o.series_nc;
  out.report_dir = o.report;
  out.report_reaches = o.report_reaches;
  out.hydrographs = o.hydrographs;
  out.overwrite = o.overwrite;
  if (!o.units.empty()) out.units = io::unitSystemFromName(o.units);  // CLI11 and the run file admit only si, us
  return r;
}

/// What an ensemble run did: members, routing time, and the members'
/// peaks at the outlets (10th, 50th, 90th percentile).
void printEnsembleSummary(std::ostream& out, std::ostream& err, const run::Ensemble& e,
                          const run::EnsembleSummary& s, const RouteOptions& o) {
  const network::NetworkPlan& plan = e.plan();
  const routing::NetworkResults& r = s.reference.results;
  const int off = r.axis.utc_offset_min;
  const ConsoleUnits u{s.info.units};
  fmt::print(out, "routed {} members over {} reaches, {} steps of {} s from {} ({}); reference member {}\n",
             s.names.size(), plan.size(), r.axis.steps, r.axis.dt_s, io::formatIsoTime(r.axis.start_unix_s, off),
             o.method, s.names.front());
  fmt::print(out, "routing took {:.2f} s on {} thread(s), members side by side\n", s.routing_s, s.threads);
  std::vector<std::uint32_t> outlets;
  for (std::uint32_t i = 0; i < plan.size(); ++i)
    if (plan.isOutlet(i)) outlets.push_back(i);
  std::stable_sort(outlets.begin(), outlets.end(), [&](std::uint32_t a, std::uint32_t b) {
    return s.ensemble.peak_q_m3s[a][1] > s.ensemble.peak_q_m3s[b][1];
  });
  fmt::print(out, "members' peaks at the outlets (10 / 50 / 90 %), largest median first:\n");
  for (std::size_t k = 0; k < outlets.size() && k < kNodesListed; ++k) {
    const auto& q = s.ensemble.peak_q_m3s[outlets[k]];
    const auto& t = s.ensemble.peak_time_s[outlets[k]];
    fmt::print(out, "  outlet {}: peak {:.2f} / {:.2f} / {:.2f} {}, at {} / {} / {}\n", plan.reach_id[outlets[k]],
               u.q(q[0]), u.q(q[1]), u.q(q[2]), u.q_unit(), io::formatIsoTime(t[0], off),
               io::formatIsoTime(t[1], off), io::formatIsoTime(t[2], off));
  }
  if (outlets.size() > kNodesListed)
    fmt::print(out, "  ... and {} more outlet(s), all in the reaches layer\n", outlets.size() - kNodesListed);
  printWarnings(err, r.warnings, "warning: ");
  fmt::print(out, "wrote {}\n", s.gpkg);
  if (!o.report.empty())
    fmt::print(out, "run report (open in a web browser): {}\n", (fs::path(o.report) / "index.html").string());
  fmt::print(out, "caution: {}\n", run::kResultsCaution);
}

/// A network with errors: one line per error, exit 1.
int refused(BarProgress& progress, const run::NetworkHasErrors& e, std::ostream& err) {
  progress.finish();
  for (const auto& p : e.problems())
    if (p.severity == network::Severity::Error) fmt::print(err, "{}\n", run::problemLine(p, e.geographic()));
  fmt::print(err, "route refused: the network has errors (run `reachwise check` for details)\n");
  return kExitInput;
}

int routeEnsemble(const RouteOptions& o, std::ostream& out, std::ostream& err) {
  BarProgress progress(!o.quiet && o.speaks());
  try {
    const run::EnsembleSummary s = run::routeEnsemble(requestOf(o), &progress);
    if (!o.speaks()) return kExitOk;  // rank 0 speaks
    progress.finish();
    for (const auto& note : s.notes) fmt::print(err, "{}\n", note);
    if (!o.quiet) printEnsembleSummary(out, err, *s.source, s, o);
  } catch (const run::NetworkHasErrors& e) {
    return refused(progress, e, err);
  }
  if (o.timings) progress.times().print(out);
  return kExitOk;
}

int route(const RouteOptions& o, std::ostream& out, std::ostream& err) {
  if (!o.members.empty()) return routeEnsemble(o, out, err);
  BarProgress progress(!o.quiet && o.speaks());
  run::RouteSummary s;
  try {
    s = run::route(requestOf(o), &progress);
  } catch (const run::NetworkHasErrors& e) {
    return refused(progress, e, err);
  }
  progress.finish();
  for (const auto& note : s.notes) fmt::print(err, "{}\n", note);

  if (!o.speaks()) return kExitOk;
  const std::vector<io::LakeOutput> lakes = run::routedLakes(s);
  if (o.demo || !o.quiet) printRunSummary(out, err, s, lakes, o);
  if (o.timings) {
    progress.times().print(out);
    const routing::NetworkResults& r = s.results;
    if (r.series_read_ahead + r.series_read_on_demand > 0)
      fmt::print(out, "  forcing series read ahead {}, read when asked {}\n", r.series_read_ahead,
                 r.series_read_on_demand);
  }
  return kExitOk;
}

std::ostream& errorStream(const RouteOptions& o) { return o.speaks() ? std::cerr : silenced(); }

int runGuarded(const RouteOptions& o) {
  return guarded(errorStream(o), o.network,
                 [&] { return route(o, o.speaks() ? std::cout : silenced(), errorStream(o)); });
}

/// Fills what the command line left unset from the run file's `[route]`
/// table (flags win).
void applyRunFile(const CLI::App& sub, RouteOptions& o) {
  if (o.config.empty()) return;
  run::requireExisting(o.config);
  const io::RouteConfig c = io::RouteConfig::fromFile(o.config);
  auto take = [&](const char* flag, auto& field, const auto& value) {
    if (value && sub.count(flag) == 0) field = *value;
  };
  take("--inflow", o.inflow, c.inflow);
  take("--lateral", o.lateral, c.lateral);
  take("--members", o.members, c.members);
  take("--method", o.method, c.method);
  take("--dt", o.dt_s, c.dt_s);
  take("--diffusion-below", o.diffusion_below, c.diffusion_below);
  take("--spread-budget", o.spread_budget, c.spread_budget);
  take("--out", o.out, c.out);
  take("--schema", o.schema, c.schema);
  take("--csv", o.csv, c.csv);
  take("--series", o.series_nc, c.series);
  take("--report", o.report, c.report);
  take("--save-state", o.save_state, c.save_state);
  take("--initial-state", o.initial_state, c.initial_state);
  take("--report-reaches", o.report_reaches, c.report_reaches);
  take("--hydrographs", o.hydrographs, c.hydrographs);
  take("--threads", o.threads, c.threads);
  take("--max-steps", o.max_steps, c.max_steps);
  take("--max-hydrograph-rows", o.max_hydrograph_rows, c.max_hydrograph_rows);
  take("--write-back", o.write_back, c.write_back);
  take("--overwrite", o.overwrite, c.overwrite);
  take("--quiet", o.quiet, c.quiet);
  take("--timings", o.timings, c.timings);
  take("--units", o.units, c.units);
}

}  // namespace

void addRouteCommand(CLI::App& app, Runner& chosen, const std::string& command_line, routing::Ranks* ranks) {
  auto o = std::make_shared<RouteOptions>();
  o->ranks = ranks;
  CLI::App* sub = app.add_subcommand("route", "Route inflow hydrographs through a network and write the results");
  sub->add_option("NETWORK", o->network, "Network: any path or connection string GDAL opens as vector data")->required();
  sub->add_option("--inflow", o->inflow,
                                  "CSV or NetCDF of discharge entering at the top of named reaches");
  sub->add_option("--lateral", o->lateral, "CSV or NetCDF of lateral inflow along named reaches");
  sub->add_option("--members", o->members,
                  "Forecast ensemble: a folder of inflow forcing files (CSV or NetCDF), or a quoted glob pattern; "
                  "each file is a member replacing --inflow (a --lateral is shared), named by its file's stem");
  sub->add_option("--layer", o->layer, "Layer name (default: the only line layer)");
  sub->add_option("--lakes", o->lakes,
                  "Lakes and reservoirs: a polygon source (fields in docs/formats.md, \"Lakes\")");
  sub->add_option("--lakes-layer", o->lakes_layer, "Layer of the lakes (default: the only polygon layer)");
  sub->add_option("--observed", o->observed,
                  "CSV or NetCDF of observed discharge (gauge records) keyed by reach id, or by gauge id with --gauges; "
                  "scores in the gauges layer");
  sub->add_option("--gauges", o->gauges, "Gauges: a point source with gauge_id and optional reach_id");
  sub->add_option("--gauges-layer", o->gauges_layer, "Layer of the gauges (default: the only point layer)");
  sub->add_option("--gauge-snap", o->gauge_snap_m,
                  "Largest distance from a gauge to its reach, metres (default 100)")
      ->check(CLI::PositiveNumber);
  sub->add_option("--config", o->config,
                  "TOML run file: field mappings and defaults ([network]), any of these options ([route])");
  sub->add_option("--method", o->method,
                  "vpmc (default), mc, muskingum or diffusion (slow on steep reaches; vpmc already uses it on flat ones)")
      ->check(CLI::IsMember(run::methodNames()));
  addVpmcOptions(*sub, o->diffusion_below, o->spread_budget);
  sub->add_option("--dt", o->dt_s, "Output/forcing time step, s (default: the inflow file's)")->check(timeStepCheck());
  sub->add_option("--max-steps", o->max_steps,
                  fmt::format("Most time steps the run may have (default {})", io::kDefaultMaxSteps))
      ->check(CLI::Range(std::size_t{2}, kMostSteps));
  sub->add_option("--max-hydrograph-rows", o->max_hydrograph_rows,
                  fmt::format("Most hydrograph rows (reaches x steps) the run may write (default {})",
                              run::kDefaultMaxHydrographRows))
      ->check(CLI::PositiveNumber);
  sub->add_option("--out", o->out,
                  "Output GeoPackage (default reachwise-results.gpkg), or a PostgreSQL/PostGIS database "
                  "(PG:\"dbname=... host=...\" or PG:service=NAME)");
  sub->add_option("--schema", o->schema,
                  fmt::format("Schema of the results in a database given by --out PG:... (default {}; "
                              "created when missing)", io::kDefaultSchema));
  sub->add_option("--csv", o->csv, "Also write the tables as CSV files into this folder");
  sub->add_flag("--write-back", o->write_back,
                "Write the result layers into the input GeoPackage, or beside the network table in its "
                "database schema (prefix rw_)");
  sub->add_flag("--overwrite", o->overwrite, "Replace existing outputs");
  sub->add_option("--hydrographs", o->hydrographs,
                  "Reaches whose hydrographs are written: comma-separated all, none, outlets, confluences, "
                  "auto (default: all below 10,000 reaches, else outlets and confluences) or reach ids");
  sub->add_option("--series", o->series_nc,
                  "Write the chosen hydrographs to this NetCDF file instead of the GeoPackage table");
  sub->add_option("--save-state", o->save_state,
                  "Write every reach's and lake's state at the end time to this NetCDF file, for --initial-state");
  sub->add_option("--initial-state", o->initial_state,
                  "Start from a state saved by --save-state (same network, method and step; the forcing starts at "
                  "the state's time) instead of the steady state");
  sub->add_option("--report", o->report, "Write an HTML run report with figures into this folder");
  sub->add_option("--report-reaches", o->report_reaches,
                  "Reach ids (comma-separated, at most 24) drawn in hydrograph panels of their own in the report");
  sub->add_option("--units", o->units,
                  "Units of every output and of the summary: si or us (US customary: ft, ft3/s); "
                  "default: the network's input units")
      ->check(CLI::IsMember({"si", "us"}));
  sub->add_option("--threads", o->threads, threadsHelp())->check(CLI::Range(1u, kMostThreads));
  sub->add_flag("--quiet", o->quiet, "Print nothing but errors");
  sub->add_flag("--timings", o->timings,
                "Print the wall and CPU time of each stage (reading, forcing, routing, writing) and the peak memory, "
                "also with --quiet");
  sub->callback([&chosen, o, sub, command_line] {
    o->command_line = command_line;
    chosen = [o, sub] {
      const int loaded = guarded(errorStream(*o), o->config, [&] {
        applyRunFile(*sub, *o);
        return kExitOk;
      });
      if (loaded != kExitOk) return loaded;
      if (o->inflow.empty() && o->lateral.empty() && o->members.empty()) {
        fmt::print(errorStream(*o), "route: give --inflow and/or --lateral, or --members (or set them in the run "
                                    "file's [route] table)\n");
        return kExitUsage;
      }
      return runGuarded(*o);
    };
  });
}

/// Where the demo's data lies, relative to the program itself: an
/// installed program's PREFIX/share/reachwise/sample-network, or the copy
/// the build puts beside it (BUILD/share/...); REACHWISE_SAMPLE_DIR in the
/// environment wins. InputError when none holds the network.
fs::path sampleDir() {
  std::vector<fs::path> candidates;
  if (const char* env = std::getenv("REACHWISE_SAMPLE_DIR"); env && *env) candidates.emplace_back(env);
  std::error_code ec;
  const fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  if (!ec) {
    const fs::path dir = exe.parent_path();
    candidates.push_back(dir / "share/reachwise/sample-network");
    candidates.push_back(dir.parent_path() / "share/reachwise/sample-network");
  }
  for (const auto& c : candidates)
    if (fs::exists(c / "network.gpkg", ec)) return c;
  std::string looked;
  for (const auto& c : candidates) looked += (looked.empty() ? "" : ", ") + c.string();
  InputLocation at;
  at.file = "network.gpkg";
  throw InputError(at, "cannot find the demo's sample network (looked in " + looked +
                           "); set REACHWISE_SAMPLE_DIR to the sample-network folder");
}

void addDemoCommand(CLI::App& app, Runner& chosen, const std::string& command_line, routing::Ranks* ranks) {
  auto dir = std::make_shared<std::string>("reachwise-demo");
  CLI::App* sub = app.add_subcommand("demo", "Route the shipped sample network (with its reservoir) and storm scenario");
  sub->add_option("--out", *dir, "Output folder (default reachwise-demo)");
  sub->callback([&chosen, dir, command_line, ranks] {
    chosen = [dir, command_line, ranks] {
      RouteOptions o;
      o.ranks = ranks;
      fs::path sample;
      if (const int found = guarded(errorStream(o), "demo", [&] {
            sample = sampleDir();
            return kExitOk;
          });
          found != kExitOk)
        return found;
      o.network = (sample / "network.gpkg").string();
      o.inflow = (sample / "inflow.csv").string();
      o.lateral = (sample / "lateral.csv").string();
      o.lakes = (sample / "lakes.gpkg").string();  // the reservoir RES1 on the tributary R13-R17
      o.observed = (sample / "observed.csv").string();  // invented records at three gauges
      o.gauges = (sample / "gauges.gpkg").string();
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
