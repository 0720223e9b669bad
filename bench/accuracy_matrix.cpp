// The accuracy matrix: `vpmc` and `mc` (routing::ReachRouter)
// against the converged conservative zero-inertia reference of the test
// suite (tests/support/reference/DiffusionWave.hpp), on single reaches of
// 5, 20 and 80 km, slopes 0.005, 0.001, 0.0002 and 1e-5, a sharp (6 h rise)
// and a broad (48 h rise) flood wave to 5 x base flow, and three sections.
// Prints markdown tables (docs/methods.md, "Accuracy against reference
// solutions (measured)"). Measures; asserts nothing.
//
// Where the wave's Ponce number T S0 (g/d)^(1/2) is below 30 the diffusion
// wave is not a valid yardstick (Ponce, Li & Simons 1978, from memory): on
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

#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "support/reference/DiffusionWave.hpp"
#include "support/reference/Hydrograph.hpp"
#include "support/reference/SaintVenant.hpp"

using namespace reachwise;
using hydraulics::Section;
namespace ref = testsupport::reference;

namespace {

constexpr double kHour = 3600.0;
constexpr double kDt = 900.0;  // forcing step, s

// The channel (the same main channel for all three shapes; choices stated
// in docs/methods.md): n = 0.035 in the channel, 0.06 on the floodplain.
constexpr double kMainWidth = 20, kSideSlope = 2, kBankDepth = 2.5, kFloodplainWidth = 200;
constexpr double kRectangleWidth = 40;
constexpr double kChannelN = 0.035, kFloodplainN = 0.06;

struct Case {
  const char* section_name;
  Section section;
  double slope;
  double length_m;
  const char* wave_name;
  double rise_s;
};

struct MethodFigures {
  double peak_pct = 0, time_pct = 0, volume_pct = 0, dip_pct = 0, overshoot_pct = 0;
  std::uint64_t negative_clamps = 0, x_clamps = 0;
  std::uint32_t subreaches = 0, substeps = 0;
};

// Where the diffusion-wave reference is not valid (Ponce number < 30):
// the Saint-Venant reference on the same inflow, and the errors against it
// of the two methods and of the diffusion-wave reference itself.
struct DynamicFigures {
  ref::ConvergedSaintVenant reference;
  double peak = 0, travel_h = 0, attenuation_pct = 0, out_fraction = 0;
  MethodFigures vpmc, mc, diffusion;  // `diffusion`: only peak, time and volume are set
  double seconds = 0;                 // computing the reference (0 when cached)
};

struct Row {
  explicit Row(const Case& cs) : c(cs) {}
  Case c;
  double base = 0, peak_in = 0;
  double ref_peak = 0, ref_travel_h = 0, ref_attenuation_pct = 0, ref_out_fraction = 0, ponce = 0, window_h = 0;
  ref::ConvergedRun reference;
  MethodFigures vpmc, mc;
  std::optional<DynamicFigures> dynamic;
  double seconds = 0;
};

// Flows scale with the channel: base flow 0.3 and peak 1.5 times the
// bank-full discharge of the main channel at this slope.
double baseFlow(double slope) {
  return 0.3 * Section::trapezoid(kMainWidth, kSideSlope, kChannelN, slope).discharge(kBankDepth);
}

// Ponce, Li & Simons (1978) applicability number T S0 (g / d)^(1/2) for
// a wave of period T = 2 t_rise (as the router's convergence ratios take
// it), at the normal depth of the mean of base and peak flow: the
// diffusion wave needs >= 30 (from memory).
double ponceNumber(const Case& c) {
  const double base = baseFlow(c.slope);
  return 2 * c.rise_s * c.slope * std::sqrt(9.81 / c.section.normalDepth(0.5 * (base + 5 * base)));
}
constexpr double kPonceLimit = 30;

// Event volumes (above base flow) come from each solver's own volume
// totals over its internal steps, not from the 15-minute samples: on steep
// reaches the outflow front steepens to minutes and the samples would miss
// part of it.
MethodFigures measure(const std::vector<double>& out, const std::vector<double>& in, double base,
                      const ref::SeriesPeak& ref_peak, double in_peak_index, double in_event,
                      double ref_event, const routing::ReachRun& run) {
  MethodFigures f;
  const ref::SeriesPeak p = ref::peakOf(out);
  const double rise = *std::max_element(in.begin(), in.end()) - base;
  const double base_volume = base * kDt * static_cast<double>(in.size() - 1);
  f.peak_pct = 100 * (p.value - ref_peak.value) / ref_peak.value;
  f.time_pct = 100 * (p.index - ref_peak.index) / (ref_peak.index - in_peak_index);
  f.volume_pct = 100 * (run.volume.outflow_m3 - base_volume - ref_event) / in_event;
  f.dip_pct = 100 * std::max(0.0, base - *std::min_element(out.begin(), out.end())) / rise;
  f.overshoot_pct = 100 * std::max(0.0, *std::max_element(out.begin(), out.end()) - (base + rise)) / rise;
  f.negative_clamps = run.numerics.negative_clamps;
  f.x_clamps = run.numerics.x_clamps;
  f.subreaches = run.numerics.subreaches;
  f.substeps = run.numerics.substeps;
  return f;
}

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

// The Saint-Venant reference on the row's inflow (its window is the
// diffusion-wave reference's, so all solvers see the same inflow), and
// the errors against it.
DynamicFigures dynamicReference(const Row& row, const std::vector<double>& in, double in_event,
                                const routing::ReachRun (&runs)[2], const std::vector<double> (&outs)[2]) {
  const auto t0 = std::chrono::steady_clock::now();
  DynamicFigures d;
  const std::string key = std::string(kDynamicPrefix) + cacheKey(row.c);
  const auto cached = referenceCache<ref::ConvergedSaintVenant>().find(key);
  if (cached != referenceCache<ref::ConvergedSaintVenant>().end()) {
    d.reference = cached->second.run;
  } else {
    d.reference = ref::convergeSaintVenant(row.c.section, row.c.length_m, in, kDt, row.c.rise_s);
    storeCache(key, CachedReference<ref::ConvergedSaintVenant>{row.window_h * kHour, d.reference});
    d.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  }
  const std::vector<double>& q_sv = d.reference.run.outflow_m3s;
  const double base_volume = row.base * kDt * static_cast<double>(in.size() - 1);
  const double sv_event = d.reference.run.outflow_m3 - base_volume;
  const ref::SeriesPeak p_sv = ref::peakOf(q_sv), p_in = ref::peakOf(in);
  d.peak = p_sv.value;
  d.travel_h = (p_sv.index - p_in.index) * kDt / kHour;
  d.attenuation_pct = 100 * (p_in.value - p_sv.value) / (p_in.value - row.base);
  d.out_fraction = sv_event / in_event;
  d.vpmc = measure(outs[0], in, row.base, p_sv, p_in.index, in_event, sv_event, runs[0]);
  d.mc = measure(outs[1], in, row.base, p_sv, p_in.index, in_event, sv_event, runs[1]);
  const ref::SeriesPeak p_dw = ref::peakOf(row.reference.run.outflow_m3s);
  d.diffusion.peak_pct = 100 * (p_dw.value - p_sv.value) / p_sv.value;
  d.diffusion.time_pct = 100 * (p_dw.index - p_sv.index) / (p_sv.index - p_in.index);
  d.diffusion.volume_pct = 100 * (row.reference.run.outflow_m3 - d.reference.run.outflow_m3) / in_event;
  return d;
}

Row run(const Case& c) {
  const auto t0 = std::chrono::steady_clock::now();
  Row row(c);
  const Section& s = c.section;
  row.base = baseFlow(c.slope);
  row.peak_in = 5 * row.base;
  // Long enough for the wave to pass: the rise, a falling limb of four rise
  // times, and twice the travel time at the slowest celerity over the
  // flows; doubled (up to three times) while less than 99 % of the event
  // volume has left the reference reach (flat reaches spread the wave).
  double c_min = 1e9;
  for (int i = 0; i <= 20; ++i) c_min = std::min(c_min, s.celerity(s.normalDepth(row.base + (row.peak_in - row.base) * i / 20)));
  const double start = kHour;
  double window = 5 * c.rise_s + 2 * c.length_m / c_min;
  std::vector<double> in;
  double in_event = 0, ref_event = 0;
  const auto cached = referenceCache<ref::ConvergedRun>().find(cacheKey(c));
  if (cached != referenceCache<ref::ConvergedRun>().end()) {
    window = cached->second.window;
    const auto samples = static_cast<std::size_t>(std::ceil((start + window) / kDt)) + 1;
    in = ref::gammaWave(row.base, row.peak_in - row.base, c.rise_s, start, kDt, samples);
    row.reference = cached->second.run;
    in_event = ref::eventVolume(in, row.base, kDt);
    ref_event = row.reference.run.outflow_m3 - row.base * kDt * static_cast<double>(samples - 1);
  }
  for (int attempt = 0; cached == referenceCache<ref::ConvergedRun>().end(); ++attempt, window *= 2) {
    const auto samples = static_cast<std::size_t>(std::ceil((start + window) / kDt)) + 1;
    in = ref::gammaWave(row.base, row.peak_in - row.base, c.rise_s, start, kDt, samples);
    row.reference = ref::convergeDiffusionWave(s, c.length_m, in, kDt, c.rise_s);
    in_event = ref::eventVolume(in, row.base, kDt);
    ref_event = row.reference.run.outflow_m3 - row.base * kDt * static_cast<double>(samples - 1);
    if (ref_event >= 0.99 * in_event || attempt == 3) {
      storeCache(cacheKey(c), CachedReference<ref::ConvergedRun>{window, row.reference});
      break;
    }
  }
  row.window_h = window / kHour;
  const std::vector<double>& q_ref = row.reference.run.outflow_m3s;
  const ref::SeriesPeak p_ref = ref::peakOf(q_ref), p_in = ref::peakOf(in);
  row.ref_peak = p_ref.value;
  row.ref_travel_h = (p_ref.index - p_in.index) * kDt / kHour;
  row.ref_attenuation_pct = 100 * (p_in.value - p_ref.value) / (p_in.value - row.base);
  row.ref_out_fraction = ref_event / in_event;
  row.ponce = ponceNumber(c);

  routing::ReachRouter router;
  std::vector<double> outs[2];
  routing::ReachRun runs[2];
  const routing::Method methods[2] = {routing::Method::VariableParameter, routing::Method::ConstantParameter};
  for (int k = 0; k < 2; ++k) {
    routing::RouteOptions opt;
    opt.method = methods[k];
    runs[k] = router.route({s, c.length_m}, in, {}, kDt, opt, outs[k]);
    (k == 0 ? row.vpmc : row.mc) = measure(outs[k], in, row.base, p_ref, p_in.index, in_event, ref_event, runs[k]);
  }
  if (row.ponce < kPonceLimit) row.dynamic = dynamicReference(row, in, in_event, runs, outs);
  row.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return row;
}

std::string pair(double a, double b, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%+.*f / %+.*f", decimals, a, decimals, b);
  return buf;
}

std::string triple(double a, double b, double c, int decimals) {
  char buf[96];
  std::snprintf(buf, sizeof buf, "%+.*f / %+.*f / %+.*f", decimals, a, decimals, b, decimals, c);
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
  for (double slope : {0.005, 0.001, 0.0002, 0.00001}) {
    if (only_slope > 0 && std::abs(slope - only_slope) > 1e-12) continue;
    const Section sections[] = {
        Section::rectangle(kRectangleWidth, kChannelN, slope),
        Section::trapezoid(kMainWidth, kSideSlope, kChannelN, slope),
        Section::twoStage(kMainWidth, kSideSlope, kBankDepth, kFloodplainWidth, kChannelN, kFloodplainN, slope)};
    const char* names[] = {"rectangle", "trapezoid", "two-stage"};
    for (int k = 0; k < 3; ++k)
      for (double km : {5.0, 20.0, 80.0}) {
        if (only_length_km > 0 && km != only_length_km) continue;
        for (const Case& c : {Case{names[k], sections[k], slope, km * 1000, "sharp", 6 * kHour},
                              Case{names[k], sections[k], slope, km * 1000, "broad", 48 * kHour}})
          if (!only_low_ponce || ponceNumber(c) < kPonceLimit) cases.push_back(c);
      }
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
                r.c.section_name, r.c.slope, r.c.length_m / 1000, r.c.wave_name, r.base, r.peak_in, r.ref_peak,
                r.ref_attenuation_pct, r.ref_travel_h, r.window_h, r.ref_out_fraction, r.ponce, r.reference.levels,
                r.reference.converged ? "" : " (not converged)", r.reference.grid.cells, r.reference.grid.substeps,
                100 * r.reference.last_peak_change, r.vpmc.subreaches, r.vpmc.substeps, r.mc.subreaches,
                r.mc.substeps, r.seconds);
  }

  if (std::any_of(rows.begin(), rows.end(), [](const Row& r) { return r.dynamic.has_value(); })) {
    std::printf("\nErrors against the converged Saint-Venant reference, rows with Ponce number < %.0f (each cell: `vpmc` / `mc` / diffusion-wave reference)\n\n", kPonceLimit);
    std::printf("| section | S0 | L km | wave | Ponce number | peak %% | time %% of travel | event volume %% |\n");
    std::printf("|---|---|---|---|---|---|---|---|\n");
    for (const Row& r : rows) {
      if (!r.dynamic) continue;
      const DynamicFigures& d = *r.dynamic;
      std::printf("| %s | %g | %g | %s | %.0f | %s | %s | %s |\n", r.c.section_name, r.c.slope, r.c.length_m / 1000,
                  r.c.wave_name, r.ponce, triple(d.vpmc.peak_pct, d.mc.peak_pct, d.diffusion.peak_pct, 1).c_str(),
                  triple(d.vpmc.time_pct, d.mc.time_pct, d.diffusion.time_pct, 1).c_str(),
                  triple(d.vpmc.volume_pct, d.mc.volume_pct, d.diffusion.volume_pct, 2).c_str());
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
  std::printf("\n%zu cases in %.0f s\n", rows.size(), total);
  return 0;
}
