// The accuracy matrix: `vpmc` and `mc` (routing::ReachRouter) against the
// converged conservative zero-inertia reference of the test suite
// (tests/support/reference/DiffusionWave.hpp), on the cases of
// tests/support/AccuracyMatrix.hpp: single reaches of 5, 20 and 80 km,
// slopes 0.005, 0.001, 0.0002 and 1e-5, a sharp (6 h rise) and a broad
// (48 h rise) flood wave to 5 x base flow, and three sections. Prints
// markdown tables (docs/methods.md, "Accuracy against reference solutions
// (measured)"), and which rows where the diffusion wave is valid miss the
// targets. Measures; asserts nothing (tests/routing/AccuracyTest.cpp does).
//
// Where the wave's Ponce number T S0 (g/d)^(1/2) is below 30 the diffusion
// wave is not a proven yardstick (Ponce, Li & Simons 1978, from memory): on
// those rows the program also computes the converged full Saint-Venant
// reference (tests/support/reference/SaintVenant.hpp) on the same inflow
// and prints two more tables: the errors of `vpmc`, `mc` and of the
// diffusion-wave reference itself against it, and the Saint-Venant
// reference on each of those cases.
//
//   build/bench/accuracy_matrix                # the whole matrix
//   build/bench/accuracy_matrix 80 0.001       # only 80 km reaches at S0 = 0.001
//   build/bench/accuracy_matrix --low-ponce    # only the rows with Ponce number < 30
//   build/bench/accuracy_matrix --low-ponce 0 0.0002   # those at S0 = 0.0002 (0: any length)
//
// With REACHWISE_REFERENCE_CACHE=<file> the converged reference runs (both
// solvers, one line per case and solver) are read from that file when it
// holds the case (same section, slope, length, wave) and written to it when
// not, so the router side can be re-measured in seconds (e.g.
// REACHWISE_REFERENCE_CACHE=build/accuracy_reference.cache). The cache is
// only valid for the reference code that wrote it: delete it when
// tests/support/reference changes.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <optional>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/routing/ReachRouter.hpp"
#include "support/AccuracyMatrix.hpp"
#include "support/reference/SaintVenant.hpp"

using namespace reachwise;
using namespace testsupport::accuracy;

namespace {

// Where the diffusion wave is not a proven yardstick (Ponce number < 30):
// the Saint-Venant reference on the same inflow, and the errors against it
// of the two methods and of the diffusion-wave reference itself.
struct DynamicFigures {
  ref::ConvergedSaintVenant reference;
  double peak = 0, travel_h = 0, attenuation_pct = 0, out_fraction = 0;
  Figures vpmc, mc, diffusion;  // the `diffusion` method
  Figures zero_inertia;         // the diffusion-wave reference's peak, time and volume
  double seconds = 0;           // computing the reference (0 when cached)
};

struct Row {
  explicit Row(const Case& cs) : c(cs) {}
  Case c;
  double ref_peak = 0, ref_travel_h = 0, ref_attenuation_pct = 0, ref_out_fraction = 0;
  Reference reference;
  Figures vpmc, mc;
  std::optional<DynamicFigures> dynamic;
  double seconds = 0;
};

// The reference cache (see the file comment): one line per case and
// solver, its key (the Saint-Venant reference's prefixed with
// "saint-venant/"), the window and the fields of the converged run the
// matrix reads.
constexpr std::string_view kDynamicPrefix = "saint-venant/";
template <class Converged>
struct CachedReference {
  double window = 0;
  Converged run;
};
template <class Converged>
std::map<std::string, CachedReference<Converged>>& referenceCache() {
  static std::map<std::string, CachedReference<Converged>> cache;
  return cache;
}
const char* cachePath() { return std::getenv("REACHWISE_REFERENCE_CACHE"); }
std::string cacheKey(const Case& c) {
  char buf[128];
  std::snprintf(buf, sizeof buf, "%s/%.17g/%.17g/%s", c.section_name, c.slope, c.length_m, c.wave_name);
  return buf;
}
template <class Converged>
bool readCached(std::istringstream& in, CachedReference<Converged>& r) {
  std::size_t n = 0;
  int converged = 0;
  in >> r.window >> r.run.levels >> converged >> r.run.grid.cells >> r.run.grid.substeps >> r.run.last_peak_change >>
      r.run.run.outflow_m3 >> n;
  r.run.converged = converged != 0;
  r.run.run.outflow_m3s.resize(n);
  for (double& v : r.run.run.outflow_m3s) in >> v;
  return static_cast<bool>(in);
}
void loadCache() {
  if (!cachePath()) return;
  std::ifstream f(cachePath());
  std::string line;
  while (std::getline(f, line)) {
    std::istringstream in(line);
    std::string key;
    in >> key;
    if (key.starts_with(kDynamicPrefix)) {
      CachedReference<ref::ConvergedSaintVenant> r;
      if (readCached(in, r)) referenceCache<ref::ConvergedSaintVenant>()[key] = std::move(r);
    } else {
      CachedReference<ref::ConvergedRun> r;
      if (readCached(in, r)) referenceCache<ref::ConvergedRun>()[key] = std::move(r);
    }
  }
}
template <class Converged>
void storeCache(const std::string& key, const CachedReference<Converged>& r) {
  if (!cachePath()) return;
  std::ofstream f(cachePath(), std::ios::app);
  f.precision(17);
  f << key << ' ' << r.window << ' ' << r.run.levels << ' ' << int(r.run.converged) << ' ' << r.run.grid.cells << ' '
    << r.run.grid.substeps << ' ' << r.run.last_peak_change << ' ' << r.run.run.outflow_m3 << ' '
    << r.run.run.outflow_m3s.size();
  for (double v : r.run.run.outflow_m3s) f << ' ' << v;
  f << '\n';
}

// The options of a method as measured here: `vpmc` itself, without its
// hand-over of flat reaches to the diffusion wave (measured as `diffusion`).
routing::RouteOptions optionsOf(routing::Method m) {
  routing::RouteOptions opt;
  opt.method = m;
  opt.diffusion_below_ponce = 0;
  return opt;
}

// The Saint-Venant reference on the row's inflow (the diffusion-wave
// reference's window, so all solvers see the same inflow), and the errors
// against it.
DynamicFigures dynamicReference(const Row& row) {
  const auto t0 = std::chrono::steady_clock::now();
  const Case& c = row.c;
  const Reference& r = row.reference;
  DynamicFigures d;
  const std::string key = std::string(kDynamicPrefix) + cacheKey(c);
  const auto cached = referenceCache<ref::ConvergedSaintVenant>().find(key);
  if (cached != referenceCache<ref::ConvergedSaintVenant>().end()) {
    d.reference = cached->second.run;
  } else {
    d.reference = ref::convergeSaintVenant(c.section, c.length_m, r.inflow, kDt, c.rise_s);
    storeCache(key, CachedReference<ref::ConvergedSaintVenant>{r.window_s, d.reference});
    d.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  }
  const std::vector<double>& q_sv = d.reference.run.outflow_m3s;
  const double base = c.baseFlow(), rise = c.inflowPeak() - base;
  const double sv_event = d.reference.run.outflow_m3 - base * kDt * static_cast<double>(r.inflow.size() - 1);
  d.peak = ref::peakOf(q_sv).value;
  d.travel_h = (ref::peakTime(q_sv, rise) - ref::peakTime(r.inflow, rise)) * kDt / kHour;
  d.attenuation_pct = 100 * (c.inflowPeak() - d.peak) / rise;
  d.out_fraction = sv_event / r.in_event_m3;
  d.vpmc = measure(c, r, optionsOf(routing::Method::VariableParameter), &q_sv, sv_event);
  d.mc = measure(c, r, optionsOf(routing::Method::ConstantParameter), &q_sv, sv_event);
  d.diffusion = measure(c, r, optionsOf(routing::Method::DiffusionWave), &q_sv, sv_event);
  d.zero_inertia = compare(c, r.inflow, r.in_event_m3, r.run.run.outflow_m3s, r.ref_event_m3, q_sv, sv_event);
  return d;
}

Row run(const Case& c) {
  const auto t0 = std::chrono::steady_clock::now();
  Row row(c);
  const auto cached = referenceCache<ref::ConvergedRun>().find(cacheKey(c));
  if (cached != referenceCache<ref::ConvergedRun>().end()) {
    row.reference.window_s = cached->second.window;
    row.reference.inflow = c.inflow(row.reference.window_s);
    row.reference.run = cached->second.run;
    row.reference.setEvents(c);
  } else {
    row.reference = solveReference(c);
    storeCache(cacheKey(c), CachedReference<ref::ConvergedRun>{row.reference.window_s, row.reference.run});
  }
  const Reference& r = row.reference;
  const double base = c.baseFlow(), rise = c.inflowPeak() - base;
  const ref::SeriesPeak p_ref = ref::peakOf(r.run.run.outflow_m3s);
  row.ref_peak = p_ref.value;
  row.ref_travel_h = (ref::peakTime(r.run.run.outflow_m3s, rise) - ref::peakTime(r.inflow, rise)) * kDt / kHour;
  row.ref_attenuation_pct = 100 * (c.inflowPeak() - p_ref.value) / rise;
  row.ref_out_fraction = r.ref_event_m3 / r.in_event_m3;
  row.vpmc = measure(c, r, optionsOf(routing::Method::VariableParameter));
  row.mc = measure(c, r, optionsOf(routing::Method::ConstantParameter));
  if (!c.diffusionWaveValid()) row.dynamic = dynamicReference(row);
  row.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return row;
}

std::string pair(double a, double b, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%+.*f / %+.*f", decimals, a, decimals, b);
  return buf;
}

std::string quadruple(double a, double b, double c, double d, int decimals) {
  char buf[128];
  std::snprintf(buf, sizeof buf, "%+.*f / %+.*f / %+.*f / %+.*f", decimals, a, decimals, b, decimals, c, decimals, d);
  return buf;
}

}  // namespace

int main(int argc, char** argv) {
  bool only_low_ponce = false;
  std::vector<const char*> args;
  for (int i = 1; i < argc; ++i) {
    if (std::string_view(argv[i]) == "--low-ponce")
      only_low_ponce = true;
    else
      args.push_back(argv[i]);
  }
  const double only_length_km = args.size() > 0 ? std::atof(args[0]) : 0;
  const double only_slope = args.size() > 1 ? std::atof(args[1]) : 0;
  std::vector<Case> cases;
  for (const Case& c : matrixCases()) {
    if (only_slope > 0 && std::abs(c.slope - only_slope) > 1e-12) continue;
    if (only_length_km > 0 && c.length_m != only_length_km * 1000) continue;
    if (only_low_ponce && c.diffusionWaveValid()) continue;
    cases.push_back(c);
  }
  loadCache();
  const auto t0 = std::chrono::steady_clock::now();
  std::vector<Row> rows;
  for (const Case& c : cases) {
    rows.push_back(run(c));
    std::fprintf(stderr, "%s S0=%g L=%g km %s: %.1f s", c.section_name, c.slope, c.length_m / 1000, c.wave_name,
                 rows.back().seconds);
    if (rows.back().dynamic) std::fprintf(stderr, " (Saint-Venant reference %.1f s)", rows.back().dynamic->seconds);
    std::fprintf(stderr, "\n");
  }
  const double total = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();

  std::printf("Errors of `vpmc` / `mc` against the converged zero-inertia reference\n\n");
  std::printf("| section | S0 | L km | wave | peak %% | time %% of travel | event volume %% | dip %% of rise | overshoot %% of rise | negative clamps | X clamps |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|---|\n");
  for (const Row& r : rows) {
    std::printf("| %s | %g | %g | %s | %s | %s | %s | %s | %s | %llu / %llu | %llu / %llu |\n", r.c.section_name,
                r.c.slope, r.c.length_m / 1000, r.c.wave_name, pair(r.vpmc.peak_pct, r.mc.peak_pct, 1).c_str(),
                pair(r.vpmc.time_pct, r.mc.time_pct, 1).c_str(), pair(r.vpmc.volume_pct, r.mc.volume_pct, 2).c_str(),
                pair(r.vpmc.dip_pct, r.mc.dip_pct, 1).c_str(), pair(r.vpmc.overshoot_pct, r.mc.overshoot_pct, 1).c_str(),
                static_cast<unsigned long long>(r.vpmc.negative_clamps), static_cast<unsigned long long>(r.mc.negative_clamps),
                static_cast<unsigned long long>(r.vpmc.x_clamps), static_cast<unsigned long long>(r.mc.x_clamps));
  }
  std::printf("\nThe reference on each case\n\n");
  std::printf("| section | S0 | L km | wave | base m³/s | inflow peak m³/s | peak m³/s | attenuation %% of rise | travel h | window h | out/in event volume | Ponce number | grids | cells over L | steps per 15 min | last peak change %% | vpmc grid m×k | mc grid m×k | s |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n");
  for (const Row& r : rows) {
    std::printf("| %s | %g | %g | %s | %.1f | %.1f | %.1f | %.1f | %.2f | %.0f | %.4f | %.0f | %zu%s | %zu | %zu | %.3f | %u×%u | %u×%u | %.1f |\n",
                r.c.section_name, r.c.slope, r.c.length_m / 1000, r.c.wave_name, r.c.baseFlow(), r.c.inflowPeak(), r.ref_peak,
                r.ref_attenuation_pct, r.ref_travel_h, r.reference.window_s / kHour, r.ref_out_fraction, r.c.ponceNumber(),
                r.reference.run.levels, r.reference.run.converged ? "" : " (not converged)", r.reference.run.grid.cells,
                r.reference.run.grid.substeps, 100 * r.reference.run.last_peak_change, r.vpmc.subreaches, r.vpmc.substeps, r.mc.subreaches,
                r.mc.substeps, r.seconds);
  }
  if (std::any_of(rows.begin(), rows.end(), [](const Row& r) { return r.dynamic.has_value(); })) {
    std::printf("\nErrors against the converged Saint-Venant reference, rows with Ponce number < %.0f (each cell: `vpmc` / `mc` / `diffusion` / diffusion-wave reference)\n\n", routing::kDiffusionWaveMinPonce);
    std::printf("| section | S0 | L km | wave | Ponce number | peak %% | time %% of travel | event volume %% |\n");
    std::printf("|---|---|---|---|---|---|---|---|\n");
    for (const Row& r : rows) {
      if (!r.dynamic) continue;
      const DynamicFigures& d = *r.dynamic;
      std::printf("| %s | %g | %g | %s | %.0f | %s | %s | %s |\n", r.c.section_name, r.c.slope, r.c.length_m / 1000,
                  r.c.wave_name, r.c.ponceNumber(), quadruple(d.vpmc.peak_pct, d.mc.peak_pct, d.diffusion.peak_pct, d.zero_inertia.peak_pct, 1).c_str(),
                  quadruple(d.vpmc.time_pct, d.mc.time_pct, d.diffusion.time_pct, d.zero_inertia.time_pct, 1).c_str(),
                  quadruple(d.vpmc.volume_pct, d.mc.volume_pct, d.diffusion.volume_pct, d.zero_inertia.volume_pct, 2).c_str());
    }
    std::printf("\nThe Saint-Venant reference on each of those cases\n\n");
    std::printf("| section | S0 | L km | wave | peak m³/s | attenuation %% of rise | travel h | out/in event volume | grids | cells over L | steps per 15 min | last peak change %% | s |\n");
    std::printf("|---|---|---|---|---|---|---|---|---|---|---|---|---|\n");
    for (const Row& r : rows) {
      if (!r.dynamic) continue;
      const DynamicFigures& d = *r.dynamic;
      std::printf("| %s | %g | %g | %s | %.2f | %.1f | %.2f | %.4f | %zu%s | %zu | %zu | %.3f | %.1f |\n", r.c.section_name,
                  r.c.slope, r.c.length_m / 1000, r.c.wave_name, d.peak, d.attenuation_pct, d.travel_h, d.out_fraction,
                  d.reference.levels, d.reference.converged ? "" : " (not converged)", d.reference.grid.cells,
                  d.reference.grid.substeps, 100 * d.reference.last_peak_change, d.seconds);
    }
  }
  std::size_t valid = 0, met = 0;
  std::printf("\nRows where the diffusion wave is valid (Ponce number >= 30) against the targets (`vpmc`):\n\n");
  for (const Row& r : rows) {
    if (!r.c.diffusionWaveValid()) continue;
    ++valid;
    const std::vector<std::string> missed = missedTargets(r.c, r.vpmc);
    if (missed.empty()) { ++met; continue; }
    std::printf("- %s misses:", r.c.name().c_str());
    for (const std::string& m : missed) std::printf(" %s;", m.c_str());
    std::printf("\n");
  }
  std::printf("- %zu of %zu meet every target\n", met, valid);
  std::size_t low = 0, low_met = 0;
  for (const Row& r : rows) {
    if (!r.dynamic) continue;
    ++low;
    const std::vector<std::string> missed = missedTargets(r.c, r.dynamic->diffusion);
    if (missed.empty()) { ++low_met; continue; }
    std::printf("- %s, `diffusion` against the Saint-Venant reference, misses:", r.c.name().c_str());
    for (const std::string& m : missed) std::printf(" %s;", m.c_str());
    std::printf("\n");
  }
  if (low) std::printf("- of the %zu rows below, `diffusion` (where `vpmc` hands them) meets every target against the Saint-Venant reference on %zu\n", low, low_met);
  std::printf("\n%zu cases in %.0f s\n", rows.size(), total);
  return 0;
}
