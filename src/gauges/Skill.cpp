#include "reachwise/gauges/Skill.hpp"

#include <cmath>
#include <limits>

#include "reachwise/Error.hpp"

namespace reachwise::gauges {

SkillScores skill(std::span<const double> observed, std::span<const double> simulated, double dt_s) {
  REACHWISE_ASSERT(observed.size() == simulated.size());
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  const auto used = [&](std::size_t i) { return !std::isnan(observed[i]) && std::isfinite(simulated[i]); };

  SkillScores s;
  double sum_o = 0, sum_s = 0;
  std::size_t peak_o = 0, peak_s = 0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!used(i)) continue;
    if (s.n_obs == 0 || observed[i] > observed[peak_o]) peak_o = i;
    if (s.n_obs == 0 || simulated[i] > simulated[peak_s]) peak_s = i;
    ++s.n_obs;
    sum_o += observed[i];
    sum_s += simulated[i];
  }
  s.nse = s.nse_peak_weighted = s.kge = s.kge_r = s.kge_alpha = s.kge_beta = s.pbias_pct = s.peak_error_pct = s.peak_timing_h = nan;
  s.volume_error_m3 = (sum_s - sum_o) * dt_s;
  if (s.n_obs == 0) return s;
  s.peak_timing_h = (static_cast<double>(peak_s) - static_cast<double>(peak_o)) * dt_s / 3600.0;
  if (observed[peak_o] > 0) s.peak_error_pct = 100.0 * (simulated[peak_s] - observed[peak_o]) / observed[peak_o];
  if (sum_o > 0) s.pbias_pct = 100.0 * (sum_s - sum_o) / sum_o;
  if (s.n_obs < 2) return s;

  // Second pass about the means (two-pass sums: no cancellation on large flows).
  const double n = static_cast<double>(s.n_obs), mean_o = sum_o / n, mean_s = sum_s / n;
  double ss_err = 0, ss_o = 0, ss_s = 0, cross = 0, w_err = 0, w_o = 0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!used(i)) continue;
    const double d_o = observed[i] - mean_o, d_s = simulated[i] - mean_s, e = simulated[i] - observed[i];
    ss_err += e * e;
    ss_o += d_o * d_o;
    ss_s += d_s * d_s;
    cross += d_o * d_s;
    const double w = mean_o > 0 ? observed[i] / mean_o : 1.0;
    w_err += w * e * e;
    w_o += w * d_o * d_o;
  }
  if (ss_o <= 0) return s;
  s.nse = 1.0 - ss_err / ss_o;
  if (w_o > 0) s.nse_peak_weighted = 1.0 - w_err / w_o;
  s.kge_alpha = std::sqrt(ss_s / ss_o);
  if (mean_o > 0) s.kge_beta = mean_s / mean_o;
  // A simulation that does not vary has no correlation: r is taken as 0.
  s.kge_r = ss_s > 0 ? cross / std::sqrt(ss_o * ss_s) : 0.0;
  if (std::isfinite(s.kge_beta))
    s.kge = 1.0 - std::sqrt((s.kge_r - 1) * (s.kge_r - 1) + (s.kge_alpha - 1) * (s.kge_alpha - 1) +
                            (s.kge_beta - 1) * (s.kge_beta - 1));
  return s;
}

}  // namespace reachwise::gauges
