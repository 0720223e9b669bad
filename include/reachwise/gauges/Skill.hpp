#pragma once
/// \file
/// How far a simulated hydrograph is from an observed one: the skill scores
/// a gauge comparison reports (docs/methods.md, "Skill scores").
///
/// Both series are on the run's time axis (samples `dt_s` apart); an
/// observed value that is NaN is missing, and a sample counts only where
/// the observation is present and the simulation finite. Every score is
/// taken over those samples.

#include <cstddef>
#include <span>

namespace reachwise::gauges {

struct SkillScores {
  std::size_t n_obs = 0;  ///< samples compared
  /// Nash–Sutcliffe efficiency (Nash & Sutcliffe 1970):
  /// 1 − Σ(s − o)² / Σ(o − ō)²; 1 is a perfect fit, 0 no better than the
  /// observed mean. NaN when the observations do not vary.
  double nse = 0;
  /// Peak-weighted NSE: squared errors and variance weighted by o/ō, so
  /// that high flows count more (a weighting in common practice for flood
  /// calibration): 1 − Σ w (s − o)² / Σ w (o − ō)².
  double nse_peak_weighted = 0;
  /// Kling–Gupta efficiency (Gupta et al. 2009):
  /// 1 − √((r − 1)² + (α − 1)² + (β − 1)²), with r the linear correlation,
  /// α = σ_s/σ_o the ratio of spreads, β = μ_s/μ_o the ratio of means.
  double kge = 0, kge_r = 0, kge_alpha = 0, kge_beta = 0;
  /// Percent bias 100 Σ(s − o) / Σ o: positive when the simulation carries
  /// too much water (the sign is stated because texts differ).
  double pbias_pct = 0;
  /// Volume error Σ(s − o) Δt (m^3 for series in m^3/s): simulated less observed.
  double volume_error_m3 = 0;
  /// Peak error 100 (s_peak − o_peak) / o_peak, the peaks being the highest
  /// compared samples of each series (no interpolation: observations may
  /// have gaps next to their peak).
  double peak_error_pct = 0;
  /// Simulated peak time less observed peak time, hours (positive: late).
  double peak_timing_h = 0;
};

/// Scores `simulated` against `observed` (same length, samples `dt_s`
/// apart). Scores that cannot be formed (fewer than two samples compared,
/// observations that do not vary, an observed mean or peak of 0) are NaN;
/// `n_obs` always says how many samples were compared.
SkillScores skill(std::span<const double> observed, std::span<const double> simulated, double dt_s);

}  // namespace reachwise::gauges
