#include "SynthCommand.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <chrono>
#include <cmath>
#include <iostream>
#include <memory>

#include "Common.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/SyntheticWriter.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/version.hpp"

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
  routing::TimeAxis axis;
  network::SyntheticNetwork net;
  try {
    axis = axisOf(o);
    // Every output is refused before any is written.
    io::refuseExisting(o.out, o.overwrite);
    if (!o.lateral.empty()) io::refuseExisting(o.lateral, o.overwrite);
    if (!o.inflow.empty()) io::refuseExisting(o.inflow, o.overwrite);
    auto t0 = Clock::now();
    net = network::generateSyntheticNetwork({o.reaches, o.outlets, o.seed});
    if (!o.quiet)
      fmt::print(out, "generated      {} reaches, {} outlet{} in {:.2f} s\n", net.size(), o.outlets,
                 o.outlets == 1 ? "" : "s", secondsSince(t0));
  } catch (const InvalidParameter& e) {
    fmt::print(std::cerr, "usage error: {}\n", e.what());
    return kExitUsage;
  }
  auto t0 = Clock::now();
  io::writeSyntheticGpkg(o.out, net, {"reaches", 32633, o.overwrite});
  if (!o.quiet) fmt::print(out, "wrote          {} (layer reaches) in {:.2f} s\n", o.out, secondsSince(t0));
  network::SyntheticStorm storm;
  storm.seed = o.seed;
  io::ForcingNetcdfOptions nc;
  nc.title = "reachwise synthetic lateral inflow";
  nc.source = std::string("reachwise ") + kVersion + " (" + kGitHash + ")";
  nc.history = fmt::format("reachwise synth --reaches {} --seed {} --steps {} --dt {}", o.reaches,
                           o.seed, o.steps, o.dt_s);
  nc.single_precision = true;  // 7 digits are ample for a made-up storm; half the bytes to read
  if (!o.lateral.empty()) {
    t0 = Clock::now();
    io::writeSyntheticLateralNetcdf(o.lateral, net, storm, axis, o.overwrite, nc);
    if (!o.quiet)
      fmt::print(out, "wrote          {} ({} reaches x {} steps) in {:.2f} s\n", o.lateral, net.size(),
                 axis.steps, secondsSince(t0));
  }
  if (!o.inflow.empty()) {
    t0 = Clock::now();
    io::writeSyntheticInflowCsv(o.inflow, net, storm, axis, o.overwrite);
    if (!o.quiet) fmt::print(out, "wrote          {} in {:.2f} s\n", o.inflow, secondsSince(t0));
  }
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
