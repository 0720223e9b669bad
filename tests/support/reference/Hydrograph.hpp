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

/// Volume above `base` (trapezoidal rule on samples dt_s apart), m^3.
inline double eventVolume(std::span<const double> q, double base, double dt_s) {
  double v = 0;
  for (std::size_t i = 1; i < q.size(); ++i) v += 0.5 * (q[i - 1] + q[i] - 2 * base) * dt_s;
  return v;
}

}  // namespace testsupport::reference
