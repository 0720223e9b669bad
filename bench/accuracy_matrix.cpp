// The accuracy matrix: `vpmc` and `mc` (routing::ReachRouter)
// against the converged conservative zero-inertia reference of the test
// suite (tests/support/reference/DiffusionWave.hpp), on single reaches of
// 5, 20 and 80 km, slopes 0.005, 0.001, 0.0002 and 1e-5, a sharp (6 h rise)
// and a broad (48 h rise) flood wave to 5 x base flow, and three sections.
// Prints markdown tables (docs/methods.md, "Accuracy against reference
// solutions (measured)"). Measures; asserts nothing.
//
//   build/bench/accuracy_matrix            # the whole matrix
//   build/bench/accuracy_matrix 80 0.001   # only 80 km reaches at S0 = 0.001
//
// With REACHWISE_REFERENCE_CACHE=<file> the converged reference runs are
// read from that file when it holds the case (same section, slope, length,
// wave) and written to it when not, so the router side can be re-measured
// in seconds (e.g. REACHWISE_REFERENCE_CACHE=build/accuracy_reference.cache).
// The cache is only valid for the reference code that wrote it: delete it
// when tests/support/reference changes.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "support/reference/DiffusionWave.hpp"
#include "support/reference/Hydrograph.hpp"

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

struct Row {
  explicit Row(const Case& cs) : c(cs) {}
  Case c;
  double base = 0, peak_in = 0;
  double ref_peak = 0, ref_travel_h = 0, ref_attenuation_pct = 0, ref_out_fraction = 0, ponce = 0, window_h = 0;
  ref::ConvergedRun reference;
  MethodFigures vpmc, mc;
  double seconds = 0;
};

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

// The reference cache (see the file comment): one line per case, its key,
// the window and the fields of ConvergedRun the matrix reads.
struct CachedReference {
  double window = 0;
  ref::ConvergedRun run;
};
std::map<std::string, CachedReference>& referenceCache() {
  static std::map<std::string, CachedReference> cache;
  return cache;
}
const char* cachePath() { return std::getenv("REACHWISE_REFERENCE_CACHE"); }
std::string cacheKey(const Case& c) {
  char buf[128];
  std::snprintf(buf, sizeof buf, "%s/%.17g/%.17g/%s", c.section_name, c.slope, c.length_m, c.wave_name);
  return buf;
}
void loadCache() {
  if (!cachePath()) return;
  std::ifstream f(cachePath());
  std::string line;
  while (std::getline(f, line)) {
    std::istringstream in(line);
    std::string key;
    CachedReference r;
    std::size_t n = 0;
    int converged = 0;
    in >> key >> r.window >> r.run.levels >> converged >> r.run.grid.cells >> r.run.grid.substeps >>
        r.run.last_peak_change >> r.run.run.outflow_m3 >> n;
    r.run.converged = converged != 0;
    r.run.run.outflow_m3s.resize(n);
    for (double& v : r.run.run.outflow_m3s) in >> v;
    if (in) referenceCache()[key] = std::move(r);
  }
}
void storeCache(const std::string& key, const CachedReference& r) {
  if (!cachePath()) return;
  std::ofstream f(cachePath(), std::ios::app);
  f.precision(17);
  f << key << ' ' << r.window << ' ' << r.run.levels << ' ' << int(r.run.converged) << ' ' << r.run.grid.cells << ' '
    << r.run.grid.substeps << ' ' << r.run.last_peak_change << ' ' << r.run.run.outflow_m3 << ' '
    << r.run.run.outflow_m3s.size();
  for (double v : r.run.run.outflow_m3s) f << ' ' << v;
  f << '\n';
}

Row run(const Case& c) {
  const auto t0 = std::chrono::steady_clock::now();
  Row row(c);
  const Section& s = c.section;
  // Flows scale with the channel: base flow 0.3 and peak 1.5 times the
  // bank-full discharge of the main channel at this slope.
  const double q_bank = Section::trapezoid(kMainWidth, kSideSlope, kChannelN, c.slope).discharge(kBankDepth);
  row.base = 0.3 * q_bank;
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
  const auto cached = referenceCache().find(cacheKey(c));
  if (cached != referenceCache().end()) {
    window = cached->second.window;
    const auto samples = static_cast<std::size_t>(std::ceil((start + window) / kDt)) + 1;
    in = ref::gammaWave(row.base, row.peak_in - row.base, c.rise_s, start, kDt, samples);
    row.reference = cached->second.run;
    in_event = ref::eventVolume(in, row.base, kDt);
    ref_event = row.reference.run.outflow_m3 - row.base * kDt * static_cast<double>(samples - 1);
  }
  for (int attempt = 0; cached == referenceCache().end(); ++attempt, window *= 2) {
    const auto samples = static_cast<std::size_t>(std::ceil((start + window) / kDt)) + 1;
    in = ref::gammaWave(row.base, row.peak_in - row.base, c.rise_s, start, kDt, samples);
    row.reference = ref::convergeDiffusionWave(s, c.length_m, in, kDt, c.rise_s);
    in_event = ref::eventVolume(in, row.base, kDt);
    ref_event = row.reference.run.outflow_m3 - row.base * kDt * static_cast<double>(samples - 1);
    if (ref_event >= 0.99 * in_event || attempt == 3) {
      storeCache(cacheKey(c), {window, row.reference});
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
  // Ponce, Li & Simons (1978) applicability number T S0 (g / d)^(1/2) for
  // a wave of period T = 2 t_rise (as the router's convergence ratios take
  // it), at the normal depth of the mean of base and peak flow: the
  // diffusion wave needs >= 30 (from memory).
  row.ponce = 2 * c.rise_s * c.slope * std::sqrt(9.81 / s.normalDepth(0.5 * (row.base + row.peak_in)));

  routing::ReachRouter router;
  std::vector<double> out;
  for (routing::Method m : {routing::Method::VariableParameter, routing::Method::ConstantParameter}) {
    routing::RouteOptions opt;
    opt.method = m;
    const routing::ReachRun r = router.route({s, c.length_m}, in, {}, kDt, opt, out);
    (m == routing::Method::VariableParameter ? row.vpmc : row.mc) =
        measure(out, in, row.base, p_ref, p_in.index, in_event, ref_event, r);
  }
  row.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return row;
}

std::string pair(double a, double b, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%+.*f / %+.*f", decimals, a, decimals, b);
  return buf;
}

}  // namespace

int main(int argc, char** argv) {
  const double only_length_km = argc > 1 ? std::atof(argv[1]) : 0;
  const double only_slope = argc > 2 ? std::atof(argv[2]) : 0;
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
        cases.push_back({names[k], sections[k], slope, km * 1000, "sharp", 6 * kHour});
        cases.push_back({names[k], sections[k], slope, km * 1000, "broad", 48 * kHour});
      }
  }
  loadCache();
  const auto t0 = std::chrono::steady_clock::now();
  std::vector<Row> rows;
  for (const Case& c : cases) {
    rows.push_back(run(c));
    std::fprintf(stderr, "%s S0=%g L=%g km %s: %.1f s\n", c.section_name, c.slope, c.length_m / 1000, c.wave_name,
                 rows.back().seconds);
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
  std::printf("\n%zu cases in %.0f s\n", rows.size(), total);
  return 0;
}
