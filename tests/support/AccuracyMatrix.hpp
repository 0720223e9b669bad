#pragma once
/// \file
/// Test support: the accuracy matrix, shared by tests/routing/AccuracyTest.cpp
/// (which asserts the targets) and bench/accuracy_matrix.cpp (which prints
/// the tables of docs/methods.md, "Accuracy against reference solutions").
/// Single uniform reaches of 5, 20 and 80 km at slopes 0.005, 0.001, 0.0002
/// and 1e-5, three sections, a sharp (6 h rise) and a broad (48 h rise)
/// flood wave to 5 x base flow; a routing method's outflow against the
/// converged conservative zero-inertia reference
/// (tests/support/reference/DiffusionWave.hpp).

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "support/reference/DiffusionWave.hpp"
#include "support/reference/Hydrograph.hpp"

namespace testsupport::accuracy {

using reachwise::hydraulics::Section;
namespace ref = testsupport::reference;

inline constexpr double kHour = 3600.0;
inline constexpr double kDt = 900.0;  ///< forcing step, s

// The channel (the same main channel for all three shapes; choices stated
// in docs/methods.md): n = 0.035 in the channel, 0.06 on the floodplain.
inline constexpr double kMainWidth = 20, kSideSlope = 2, kBankDepth = 2.5, kFloodplainWidth = 200;
inline constexpr double kRectangleWidth = 40;
inline constexpr double kChannelN = 0.035, kFloodplainN = 0.06;

struct Case {
  const char* section_name;
  Section section;
  double slope;
  double length_m;
  const char* wave_name;
  double rise_s;

  /// e.g. "two_stage_S0_0p001_20km_sharp" (a test name: letters, digits, _).
  std::string name() const {
    char buf[96];
    std::snprintf(buf, sizeof buf, "%s_S0_%g_%gkm_%s", section_name, slope, length_m / 1000, wave_name);
    std::string s = buf;
    std::replace(s.begin(), s.end(), '-', '_');
    std::replace(s.begin(), s.end(), '.', 'p');
    return s;
  }
  /// Base flow 0.3 and peak 1.5 times the bank-full discharge of the main
  /// channel at this slope, so the peak is 5 x base and goes over the banks
  /// of the two-stage section.
  double baseFlow() const {
    return 0.3 * Section::trapezoid(kMainWidth, kSideSlope, kChannelN, slope).discharge(kBankDepth);
  }
  double inflowPeak() const { return 5 * baseFlow(); }
  /// Ponce, Li & Simons (1978) applicability number T S0 (g / d)^(1/2) for
  /// a wave of period T = 2 t_rise, at the mean depth d = A/T of uniform
  /// flow at the mean of base and peak flow, as the router reports it
  /// (ReachNumerics::ponce_number): the diffusion wave needs >= 30.
  double ponceNumber() const {
    const double y = section.normalDepth(0.5 * (baseFlow() + inflowPeak()));
    return 2 * rise_s * slope * std::sqrt(9.81 / (section.area(y) / section.topWidth(y)));
  }
  bool diffusionWaveValid() const { return ponceNumber() >= reachwise::routing::kDiffusionWaveMinPonce; }
  bool broad() const { return rise_s > 24 * kHour; }
  /// The inflow over a window of `window_s` after an hour of base flow.
  std::vector<double> inflow(double window_s) const {
    const auto samples = static_cast<std::size_t>(std::ceil((kHour + window_s) / kDt)) + 1;
    return ref::gammaWave(baseFlow(), inflowPeak() - baseFlow(), rise_s, kHour, kDt, samples);
  }
  /// The first window tried: the rise, a falling limb of four rise times,
  /// and twice the travel time at the slowest celerity over the flows.
  double firstWindow() const {
    double c_min = 1e9;
    for (int i = 0; i <= 20; ++i)
      c_min = std::min(c_min, section.celerity(section.normalDepth(baseFlow() + (inflowPeak() - baseFlow()) * i / 20)));
    return 5 * rise_s + 2 * length_m / c_min;
  }
};

/// The matrix: slopes × sections × lengths × waves (72 cases).
inline std::vector<Case> matrixCases() {
  std::vector<Case> cases;
  for (double slope : {0.005, 0.001, 0.0002, 0.00001}) {
    const Section sections[] = {
        Section::rectangle(kRectangleWidth, kChannelN, slope),
        Section::trapezoid(kMainWidth, kSideSlope, kChannelN, slope),
        Section::twoStage(kMainWidth, kSideSlope, kBankDepth, kFloodplainWidth, kChannelN, kFloodplainN, slope)};
    const char* names[] = {"rectangle", "trapezoid", "two-stage"};
    for (int k = 0; k < 3; ++k)
      for (double km : {5.0, 20.0, 80.0}) {
        cases.push_back({names[k], sections[k], slope, km * 1000, "sharp", 6 * kHour});
        cases.push_back({names[k], sections[k], slope, km * 1000, "broad", 48 * kHour});
      }
  }
  return cases;
}

/// A converged reference run of a case and what the figures need of it.
struct Reference {
  double window_s = 0;
  std::vector<double> inflow;
  ref::ConvergedRun run;
  double in_event_m3 = 0;   ///< inflow volume above base flow
  double ref_event_m3 = 0;  ///< reference outflow volume above base flow, from its own step totals

  void setEvents(const Case& c) {
    in_event_m3 = ref::eventVolume(inflow, c.baseFlow(), kDt);
    ref_event_m3 = run.run.outflow_m3 - c.baseFlow() * kDt * static_cast<double>(inflow.size() - 1);
  }
};

/// Solves a reference for a case with `solve(inflow)` (a ref::ConvergedRun),
/// doubling the window (up to three times) while less than 99 % of the
/// event volume has left the reach (flat reaches spread the wave).
template <class Solve>
Reference solveWith(const Case& c, Solve solve) {
  Reference r;
  r.window_s = c.firstWindow();
  for (int attempt = 0;; ++attempt, r.window_s *= 2) {
    r.inflow = c.inflow(r.window_s);
    r.run = solve(r.inflow);
    r.setEvents(c);
    if (r.ref_event_m3 >= 0.99 * r.in_event_m3 || attempt == 3) return r;
  }
}

/// The refinement the tests ask of the reference: until its peak changes by
/// less than 0.2 % of the rise, with at least one refinement (the scheme is
/// second order, so its own error is about a third of that, a tenth of the
/// tightest target; bench/accuracy_matrix.cpp asks 0.05 %).
inline ref::Refinement testRefinement() {
  ref::Refinement r;
  r.tolerance = 2e-3;
  r.min_levels = 2;
  return r;
}

/// The diffusion-wave reference of a case.
inline Reference solveReference(const Case& c, const ref::Refinement& refinement = {}) {
  return solveWith(c, [&](const std::vector<double>& inflow) {
    return ref::convergeDiffusionWave(c.section, c.length_m, inflow, kDt, c.rise_s, refinement);
  });
}

/// The cases of the matrix for which `keep(case)` holds.
template <class Keep>
std::vector<Case> matrixCasesWhere(Keep keep) {
  std::vector<Case> kept;
  for (const Case& c : matrixCases())
    if (keep(c)) kept.push_back(c);
  return kept;
}

/// A method's errors against the reference (docs/methods.md defines them).
struct Figures {
  double peak_pct = 0, time_pct = 0, volume_pct = 0, dip_pct = 0, overshoot_pct = 0;
  std::uint64_t negative_clamps = 0, x_clamps = 0;
  std::uint32_t subreaches = 0, substeps = 0;
  double cells = 0;  ///< cell updates per step (Σ sub-reaches × sub-steps over the reaches routed)
};

/// The errors of outflow `out` (whose volume above base flow, from its
/// solver's own step totals, is `out_event_m3`) against a reference outflow
/// `q_ref` (`ref_event_m3`), both routed from `inflow`. Peak times are the
/// middle of each hydrograph's top (ref::peakTime); event volumes come from
/// each solver's own volume totals over its internal steps, not from the
/// 15-minute samples (on steep reaches the outflow front steepens to
/// minutes and the samples would miss part of it).
inline Figures compare(const Case& c, const std::vector<double>& inflow, double in_event_m3,
                       const std::vector<double>& out, double out_event_m3, const std::vector<double>& q_ref,
                       double ref_event_m3) {
  const double base = c.baseFlow(), rise = c.inflowPeak() - base;
  const double t = ref::peakTime(out, rise), t_ref = ref::peakTime(q_ref, rise), t_in = ref::peakTime(inflow, rise);
  const double p = ref::peakOf(out).value, p_ref = ref::peakOf(q_ref).value;
  Figures f;
  f.peak_pct = 100 * (p - p_ref) / p_ref;
  f.time_pct = 100 * (t - t_ref) / (t_ref - t_in);
  f.volume_pct = 100 * (out_event_m3 - ref_event_m3) / in_event_m3;
  f.dip_pct = 100 * std::max(0.0, base - *std::min_element(out.begin(), out.end())) / rise;
  f.overshoot_pct = 100 * std::max(0.0, *std::max_element(out.begin(), out.end()) - (base + rise)) / rise;
  return f;
}

/// Routes the case's inflow with `options` and measures it against the
/// reference `q_ref` (default: the diffusion-wave reference's outflow).
inline Figures measure(const Case& c, const Reference& r, const reachwise::routing::RouteOptions& options,
                       const std::vector<double>* q_ref = nullptr, double ref_event_m3 = 0) {
  std::vector<double> out;
  reachwise::routing::ReachRouter router;
  const reachwise::routing::ReachRun run = router.route({c.section, c.length_m}, r.inflow, {}, kDt, options, out);
  const double base_volume = c.baseFlow() * kDt * static_cast<double>(r.inflow.size() - 1);
  Figures f = q_ref ? compare(c, r.inflow, r.in_event_m3, out, run.volume.outflow_m3 - base_volume, *q_ref, ref_event_m3)
                    : compare(c, r.inflow, r.in_event_m3, out, run.volume.outflow_m3 - base_volume,
                              r.run.run.outflow_m3s, r.ref_event_m3);
  f.negative_clamps = run.numerics.negative_clamps;
  f.x_clamps = run.numerics.x_clamps;
  f.subreaches = run.numerics.subreaches;
  f.substeps = run.numerics.substeps;
  f.cells = double(f.subreaches) * f.substeps;
  return f;
}

/// A case's length cut into a chain of reaches of about `mean_m` each
/// (0.4 to 1.6 times it, in a fixed pattern), the last one taking what is
/// left: how a network cuts a river, where reaches are often shorter than
/// the distance a wave moves in a step.
inline std::vector<double> chainLengths(double total_m, double mean_m) {
  static constexpr double kPattern[] = {1.0, 0.4, 1.6, 0.7, 1.3};
  std::vector<double> lengths;
  double left = total_m;
  for (std::size_t i = 0; left > 0; ++i) {
    const double l = kPattern[i % 5] * mean_m;
    if (left - l < 0.3 * mean_m) {
      lengths.push_back(left);
      break;
    }
    lengths.push_back(l);
    left -= l;
  }
  return lengths;
}

/// Routes the case's inflow through reaches of its section cut as
/// `lengths` (chainLengths), each one's outflow samples the next one's
/// inflow, and measures the last outflow against the reference of the whole
/// length: the hand-over at output steps between reaches and every reach's
/// grid add up as they do in a network.
inline Figures measureChain(const Case& c, const Reference& r, const std::vector<double>& lengths,
                            const reachwise::routing::RouteOptions& options) {
  std::vector<double> in = r.inflow, out;
  reachwise::routing::ReachRouter router;
  Figures f;
  reachwise::routing::ReachRun run;
  for (const double length : lengths) {
    run = router.route({c.section, length}, in, {}, kDt, options, out);
    f.negative_clamps += run.numerics.negative_clamps;
    f.x_clamps += run.numerics.x_clamps;
    f.cells += double(run.numerics.subreaches) * run.numerics.substeps;
    in.swap(out);
  }
  const double base_volume = c.baseFlow() * kDt * static_cast<double>(r.inflow.size() - 1);
  const Figures g = compare(c, r.inflow, r.in_event_m3, in, run.volume.outflow_m3 - base_volume,
                            r.run.run.outflow_m3s, r.ref_event_m3);
  f.peak_pct = g.peak_pct, f.time_pct = g.time_pct, f.volume_pct = g.volume_pct;
  f.dip_pct = g.dip_pct, f.overshoot_pct = g.overshoot_pct;
  return f;
}

/// Mean time (s) of the flow above `base`, samples dt_s apart: what a
/// reach delays is the shift of this centroid (diffusion leaves it where it
/// is, so it measures the timing alone).
inline double centroidTime(const std::vector<double>& q, double base, double dt_s) {
  double w = 0, wt = 0;
  for (std::size_t i = 0; i < q.size(); ++i) w += q[i] - base, wt += (q[i] - base) * double(i) * dt_s;
  return wt / w;
}

/// A quick reach of the case's section, `length_m` long, on base flow from
/// the top and the case's wave (zero base) as lateral inflow, over hourly
/// steps, with its converged diffusion-wave reference.
struct LateralCase {
  static constexpr double kDt = 3600;
  double length_m = 0;
  std::vector<double> inflow, lateral;
  ref::ConvergedRun reference;
};
inline LateralCase lateralCase(const Case& c, double length_m) {
  LateralCase lc;
  lc.length_m = length_m;
  const std::size_t samples = 48;
  lc.inflow.assign(samples, c.baseFlow());
  lc.lateral = ref::gammaWave(0.0, c.inflowPeak() - c.baseFlow(), c.rise_s, kHour, LateralCase::kDt, samples);
  lc.reference = ref::convergeDiffusionWave(c.section, length_m, lc.inflow, LateralCase::kDt, c.rise_s,
                                            testRefinement(), lc.lateral);
  return lc;
}

/// The lengths of the quick lateral reaches, m.
inline constexpr double kLateralLengths[] = {500.0, 1500.0, 3000.0};

/// The rows whose section and wave the quick lateral reaches take: the
/// sharp wave on the 5 km rectangle and trapezoid at S0 = 0.005 and 0.001.
inline std::vector<Case> lateralRowCases() {
  return matrixCasesWhere([](const Case& c) {
    return c.slope >= 0.001 && c.length_m == 5000 && !c.broad() && std::string(c.section_name) != "two-stage";
  });
}

/// The outflow's peak against the reference's (%) and its centroid's shift
/// (s), the reference's delay of the centroid from the lateral inflow's
/// (s), and the cells per step the route took.
struct LateralFigures {
  double peak_pct = 0, shift_s = 0, reference_delay_s = 0;
  std::uint32_t cells = 0;
};
inline LateralFigures measureLateral(const Case& c, const LateralCase& lc,
                                     const reachwise::routing::RouteOptions& options) {
  std::vector<double> out;
  reachwise::routing::ReachRouter router;
  const reachwise::routing::ReachRun run =
      router.route({c.section, lc.length_m}, lc.inflow, lc.lateral, LateralCase::kDt, options, out);
  const std::vector<double>& q_ref = lc.reference.run.outflow_m3s;
  const double t_ref = centroidTime(q_ref, c.baseFlow(), LateralCase::kDt);
  LateralFigures f;
  f.peak_pct = 100 * (ref::peakOf(out).value / ref::peakOf(q_ref).value - 1);
  f.shift_s = centroidTime(out, c.baseFlow(), LateralCase::kDt) - t_ref;
  f.reference_delay_s = t_ref - centroidTime(lc.lateral, 0.0, LateralCase::kDt);
  f.cells = run.numerics.subreaches * run.numerics.substeps;
  return f;
}

/// The accuracy targets of the default method on the rows where the
/// diffusion wave is valid: peak within 2 % (1 % for the broad wave), peak
/// time within 5 % of the travel time, event volume within 2 % (0.5 %
/// broad), outflow within [base flow, inflow peak] to 1 % of the rise, no
/// negative flow clamped (the last in missedTargets).
struct Targets {
  double peak_pct, time_pct, volume_pct, dip_pct, overshoot_pct;
};
inline Targets targetsFor(const Case& c) {
  return {c.broad() ? 1.0 : 2.0, 5.0, c.broad() ? 0.5 : 2.0, 1.0, 1.0};
}

/// The targets a method's figures miss, named with their values; empty
/// when all are met.
inline std::vector<std::string> missedTargets(const Case& c, const Figures& f) {
  const Targets t = targetsFor(c);
  std::vector<std::string> missed;
  char buf[64];
  const auto check = [&](bool ok, const char* what, double value) {
    if (ok) return;
    std::snprintf(buf, sizeof buf, "%s %+.2f", what, value);
    missed.emplace_back(buf);
  };
  check(std::abs(f.peak_pct) <= t.peak_pct, "peak %", f.peak_pct);
  check(std::abs(f.time_pct) <= t.time_pct, "time % of travel", f.time_pct);
  check(std::abs(f.volume_pct) <= t.volume_pct, "event volume %", f.volume_pct);
  check(f.dip_pct <= t.dip_pct, "dip % of rise", f.dip_pct);
  check(f.overshoot_pct <= t.overshoot_pct, "overshoot % of rise", f.overshoot_pct);
  check(f.negative_clamps == 0, "negative clamps", static_cast<double>(f.negative_clamps));
  return missed;
}

}  // namespace testsupport::accuracy
