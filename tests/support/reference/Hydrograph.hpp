#pragma once
/// \file
/// Test support: synthetic flood hydrographs and the figures the reference
/// comparisons are made of (peak, event volume). Written for the reference
/// solvers and the accuracy matrix; nothing here calls the router.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <span>
#include <vector>

namespace testsupport::reference {

/// Base flow plus a gamma-function (Pearson type III) flood wave sampled
/// every dt_s from t = 0:
///   Q(t) = base + rise [ (u) exp(1 − u) ]^beta,  u = (t − start) / t_rise,
/// zero before `start_s`. The peak (base + rise) comes t_rise after the
/// start; beta = 4 gives a falling limb about three times the rise (common
/// practice for synthetic flood hydrographs; smooth, so any difference from
/// a reference is the routing's, not the sampling's).
inline std::vector<double> gammaWave(double base, double rise, double t_rise_s, double start_s,
                                     double dt_s, std::size_t samples, double beta = 4.0) {
  std::vector<double> q(samples, base);
  for (std::size_t i = 0; i < samples; ++i) {
    const double u = (i * dt_s - start_s) / t_rise_s;
    if (u > 0) q[i] += rise * std::pow(u * std::exp(1.0 - u), beta);
  }
  return q;
}

struct SeriesPeak {
  double value = 0;  ///< interpolated peak
  double index = 0;  ///< fractional sample index
};

/// The highest sample and the parabola through it and its neighbours (common
/// practice); the sample itself at either end of the series.
inline SeriesPeak peakOf(std::span<const double> q) {
  if (q.empty()) return {};
  const std::size_t i = static_cast<std::size_t>(std::max_element(q.begin(), q.end()) - q.begin());
  if (i == 0 || i + 1 == q.size()) return {q[i], static_cast<double>(i)};
  const double a = q[i - 1], b = q[i], c = q[i + 1];
  const double den = a - 2 * b + c;
  if (den >= 0) return {b, static_cast<double>(i)};
  const double d = 0.5 * (a - c) / den;
  return {b - 0.25 * (a - c) * d, i + d};
}

/// The peak time as a fractional sample index: the middle of the interval
/// around the highest sample where the flow stays within `fraction` of
/// `rise` below it, its ends interpolated linearly. On a sharp peak it is
/// the peak's time to a small part of a sample; on a flat top, a plateau
/// held at bank-full flow for hours say, it is the plateau's middle, where
/// the time of the single highest sample would be decided by differences
/// of 1e-5 of the flow (common practice for flat-topped hydrographs; the
/// fraction 0.001 agrees with peakOf to 0.5 % of the travel time on the
/// accuracy matrix's sharp and broad peaks, docs/methods.md).
inline double peakTime(std::span<const double> q, double rise, double fraction = 0.001) {
  if (q.empty()) return 0;
  const std::size_t im = static_cast<std::size_t>(std::max_element(q.begin(), q.end()) - q.begin());
  const double level = q[im] - fraction * rise;
  std::size_t a = im, b = im;
  while (a > 0 && q[a - 1] >= level) --a;
  while (b + 1 < q.size() && q[b + 1] >= level) ++b;
  const double start = a > 0 ? static_cast<double>(a - 1) + (level - q[a - 1]) / (q[a] - q[a - 1]) : 0.0;
  const double end = b + 1 < q.size() ? static_cast<double>(b) + (q[b] - level) / (q[b] - q[b + 1])
                                      : static_cast<double>(b);
  return 0.5 * (start + end);
}

/// Volume above `base` (trapezoidal rule on samples dt_s apart), m^3.
inline double eventVolume(std::span<const double> q, double base, double dt_s) {
  double v = 0;
  for (std::size_t i = 1; i < q.size(); ++i) v += 0.5 * (q[i - 1] + q[i] - 2 * base) * dt_s;
  return v;
}

}  // namespace testsupport::reference
