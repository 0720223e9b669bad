#include "SynthCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <chrono>
#include <cmath>
#include <iostream>
#include <memory>
#include <optional>

#include "Common.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/run/Synthetic.hpp"

namespace reachwise::cli {

namespace {

using Clock = std::chrono::steady_clock;

double secondsSince(Clock::time_point t0) {
  return std::chrono::duration<double>(Clock::now() - t0).count();
}

routing::TimeAxis axisOf(const SynthOptions& o) {
  const io::IsoTime start = io::parseIsoTime(o.start);
  if (start.fraction_s != 0) throw InvalidParameter("start", "must be on a whole second");
  return routing::TimeAxis::make(start.unix_s, o.dt_s, o.steps, start.utc_offset_min);
}

int synth(const SynthOptions& o, std::ostream& out) {
  std::optional<run::SyntheticCase> made;
  try {
    run::SyntheticRequest r;
    r.gpkg = o.out;
    r.reaches = o.reaches;
    r.outlets = o.outlets;
    r.lakes = o.lakes;
    r.seed = o.seed;
    r.axis = axisOf(o);
    r.lateral_nc = o.lateral;
    r.inflow_csv = o.inflow;
    r.overwrite = o.overwrite;
    r.history = fmt::format("reachwise synth --reaches {}{} --seed {} --steps {} --dt {}", o.reaches,
                            o.lakes ? fmt::format(" --lakes {}", o.lakes) : std::string(), o.seed, o.steps, o.dt_s);
    const auto t0 = Clock::now();
    made.emplace(std::move(r));
    if (!o.quiet)
      fmt::print(out, "generated      {} reaches, {} outlet{}{} in {:.2f} s\n", made->network().size(), o.outlets,
                 o.outlets == 1 ? "" : "s",
                 o.lakes ? fmt::format(", {} lake{}", o.lakes, o.lakes == 1 ? "" : "s") : std::string(),
                 secondsSince(t0));
  } catch (const InvalidParameter& e) {
    fmt::print(std::cerr, "usage error: {}\n", e.what());
    return kExitUsage;
  }
  const run::SyntheticCase& c = *made;
  auto t0 = Clock::now();
  io::OutputCommit commit(o.overwrite);  // the files appear together or not at all
  c.writeNetwork(&commit);
  if (!o.quiet)
    fmt::print(out, "wrote          {} (layer reaches{}) in {:.2f} s\n", o.out, o.lakes ? ", layer lakes" : "",
               secondsSince(t0));
  if (!o.lateral.empty()) {
    t0 = Clock::now();
    c.writeLateral(&commit);
    if (!o.quiet)
      fmt::print(out, "wrote          {} ({} reaches x {} steps) in {:.2f} s\n", o.lateral, c.network().size(),
                 o.steps, secondsSince(t0));
  }
  if (!o.inflow.empty()) {
    t0 = Clock::now();
    c.writeInflow(&commit);
    if (!o.quiet) fmt::print(out, "wrote          {} in {:.2f} s\n", o.inflow, secondsSince(t0));
  }
  commit.commit();
  for (const auto& note : commit.recoveredNotes()) fmt::print(std::cerr, "{}\n", note);
  return kExitOk;
}

}  // namespace

int runSynth(const SynthOptions& options, std::ostream& out, std::ostream& err) {
  return guarded(err, options.out, [&] { return synth(options, out); });
}

void addSynthCommand(CLI::App& app, Runner& chosen) {
  auto o = std::make_shared<SynthOptions>();
  CLI::App* sub = app.add_subcommand(
      "synth", "Write a synthetic river network (GeoPackage) and storm forcing (NetCDF, CSV)");
  sub->add_option("OUT", o->out, "GeoPackage to write")->required();
  sub->add_option("--reaches", o->reaches, "Number of reaches")->required()->check(CLI::PositiveNumber);
  sub->add_option("--outlets", o->outlets, "Number of basins (default 1)")->check(CLI::PositiveNumber);
  sub->add_option("--lakes", o->lakes,
                  "Also place this many lakes with a weir, each around a node with a reach flowing in "
                  "(layer lakes of OUT; default 0)");
  sub->add_option("--steps", o->steps, "Forcing time steps (default 720)")->check(CLI::Range(2, 100000000));
  sub->add_option("--dt", o->dt_s, "Forcing time step, whole seconds (default 3600)")
      ->check(CLI::Range(1, 100000000))
      ->check([](const std::string& s) {
        return std::stod(s) == std::floor(std::stod(s)) ? std::string() : "must be whole seconds";
      });
  sub->add_option("--seed", o->seed, "Random seed (default 1)");
  sub->add_option("--lateral", o->lateral, "Also write lateral inflow for every reach (CF-NetCDF)");
  sub->add_option("--inflow", o->inflow, "Also write inflow at each basin's farthest headwater (CSV)");
  sub->add_option("--start", o->start, "First forcing time, ISO 8601 (default 2026-05-01T00:00:00Z)");
  sub->add_flag("--overwrite", o->overwrite, "Replace existing outputs");
  sub->add_flag("--quiet", o->quiet, "Print nothing but errors");
  sub->callback([&chosen, o] { chosen = [o] { return runSynth(*o, std::cout, std::cerr); }; });
}

}  // namespace reachwise::cli
