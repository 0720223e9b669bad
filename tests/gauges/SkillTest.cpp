#include "reachwise/gauges/Skill.hpp"

#include <gtest/gtest.h>

#include <cmath>  // before Boost.Math's statistics, which call sqrt unqualified
#include <boost/math/statistics/bivariate_statistics.hpp>
#include <boost/math/statistics/univariate_statistics.hpp>
#include <limits>
#include <random>
#include <vector>

using reachwise::gauges::SkillScores;
using reachwise::gauges::skill;

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();
constexpr double kHour = 3600.0;

/// A flood hydrograph with noise: something that looks like a gauge record.
std::vector<double> record(std::size_t n, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> noise(0.0, 3.0);
  std::vector<double> q(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double x = static_cast<double>(i) / 30.0;
    q[i] = 20.0 + 180.0 * std::pow(x * std::exp(1 - x), 3) + std::abs(noise(rng));
  }
  return q;
}

}  // namespace

// Definitions: NSE (Nash & Sutcliffe 1970), KGE and its components (Gupta et
// al. 2009). Reference values computed here with Boost.Math's statistics
// (a general-purpose library), independently of the program's sums.
TEST(Skill, ScoresMatchTheirDefinitionsComputedWithBoost) {
  namespace st = boost::math::statistics;
  const std::vector<double> o = record(200, 1), s = record(200, 2);
  const SkillScores k = skill(o, s, kHour);

  const double mo = st::mean(o), ms = st::mean(s);
  const double r = st::correlation_coefficient(o, s);
  const double alpha = std::sqrt(st::variance(s) / st::variance(o)), beta = ms / mo;
  double sse = 0;
  for (std::size_t i = 0; i < o.size(); ++i) sse += (s[i] - o[i]) * (s[i] - o[i]);
  const double nse = 1 - sse / (st::variance(o) * static_cast<double>(o.size()));
  const double kge = 1 - std::sqrt((r - 1) * (r - 1) + (alpha - 1) * (alpha - 1) + (beta - 1) * (beta - 1));

  // Round-off of sums over 200 values of order 100: 1e-12 relative is ample.
  EXPECT_EQ(k.n_obs, 200u);
  EXPECT_NEAR(k.nse, nse, 1e-12);
  EXPECT_NEAR(k.kge_r, r, 1e-12);
  EXPECT_NEAR(k.kge_alpha, alpha, 1e-12);
  EXPECT_NEAR(k.kge_beta, beta, 1e-12);
  EXPECT_NEAR(k.kge, kge, 1e-12);
  EXPECT_NEAR(k.pbias_pct, 100 * (ms - mo) / mo, 1e-10);
  EXPECT_NEAR(k.volume_error_m3, (ms - mo) * 200 * kHour, 1e-6 * mo * 200 * kHour);
}

// Analytical cases (follow from the definitions): a perfect simulation; a
// simulation scaled by a, for which r = 1, α = β = a and KGE = 1 − √2 |a − 1|;
// one shifted by c, for which NSE = 1 − n c² / Σ(o − ō)², α = 1, β = 1 + c/ō;
// the observed mean as the simulation, for which NSE = 0.
TEST(Skill, AnalyticalCases) {
  const std::vector<double> o = record(120, 3);
  const SkillScores same = skill(o, o, kHour);
  EXPECT_DOUBLE_EQ(same.nse, 1.0);
  EXPECT_DOUBLE_EQ(same.nse_peak_weighted, 1.0);
  EXPECT_NEAR(same.kge, 1.0, 1e-14);
  EXPECT_DOUBLE_EQ(same.pbias_pct, 0.0);
  EXPECT_DOUBLE_EQ(same.peak_error_pct, 0.0);
  EXPECT_DOUBLE_EQ(same.peak_timing_h, 0.0);

  std::vector<double> scaled(o), shifted(o), flat(o.size());
  double mean = 0, ss = 0;
  for (double v : o) mean += v / static_cast<double>(o.size());
  for (double v : o) ss += (v - mean) * (v - mean);
  for (auto& v : scaled) v *= 1.2;
  for (auto& v : shifted) v += 5.0;
  for (auto& v : flat) v = mean;
  const SkillScores a = skill(o, scaled, kHour);
  EXPECT_NEAR(a.kge_r, 1.0, 1e-12);
  EXPECT_NEAR(a.kge_alpha, 1.2, 1e-12);
  EXPECT_NEAR(a.kge_beta, 1.2, 1e-12);
  EXPECT_NEAR(a.kge, 1 - std::sqrt(2.0) * 0.2, 1e-12);
  EXPECT_NEAR(a.pbias_pct, 20.0, 1e-10);
  EXPECT_NEAR(a.peak_error_pct, 20.0, 1e-10);

  const SkillScores c = skill(o, shifted, kHour);
  EXPECT_NEAR(c.nse, 1 - 120 * 25.0 / ss, 1e-12);
  // Peak-weighted, w = o/ō: Σ w c² = n c² (the weights sum to n).
  double wss = 0;
  for (double v : o) wss += v / mean * (v - mean) * (v - mean);
  EXPECT_NEAR(c.nse_peak_weighted, 1 - 120 * 25.0 / wss, 1e-12);
  EXPECT_NEAR(c.kge_alpha, 1.0, 1e-12);
  EXPECT_NEAR(c.kge_beta, 1 + 5.0 / mean, 1e-12);

  const SkillScores m = skill(o, flat, kHour);
  EXPECT_NEAR(m.nse, 0.0, 1e-12);
  const SkillScores still = skill(o, std::vector<double>(o.size(), 7.0), kHour);
  EXPECT_DOUBLE_EQ(still.kge_r, 0.0);  // no variation: no correlation
  EXPECT_DOUBLE_EQ(still.kge_alpha, 0.0);
}

// A simulation late by three samples: the timing error is three steps in
// hours, the peak error 0 (the same peak, shifted; the record peaks near
// sample 30, far from the end).
TEST(Skill, PeakTimingAndMissingObservations) {
  std::vector<double> o = record(150, 4), s(o.size(), o.front());
  for (std::size_t i = 3; i < o.size(); ++i) s[i] = o[i - 3];
  const SkillScores k = skill(o, s, 900.0);
  EXPECT_NEAR(k.peak_timing_h, 3 * 900.0 / kHour, 1e-12);
  EXPECT_NEAR(k.peak_error_pct, 0.0, 1e-12);

  // Missing observations (NaN) are skipped: scores equal those of the
  // series with those samples removed.
  std::vector<double> gappy(o), o_kept, s_kept;
  for (std::size_t i = 0; i < o.size(); ++i) {
    if (i % 7 == 3) gappy[i] = kNan;
    else {
      o_kept.push_back(o[i]);
      s_kept.push_back(s[i]);
    }
  }
  const SkillScores g = skill(gappy, s, 900.0), kept = skill(o_kept, s_kept, 900.0);
  EXPECT_EQ(g.n_obs, o_kept.size());
  EXPECT_NEAR(g.nse, kept.nse, 1e-13);
  EXPECT_NEAR(g.kge, kept.kge, 1e-13);
  EXPECT_NEAR(g.pbias_pct, kept.pbias_pct, 1e-11);
}

TEST(Skill, ScoresThatCannotBeFormedAreNan) {
  const std::vector<double> none = {kNan, kNan, kNan}, sim = {1, 2, 3};
  const SkillScores empty = skill(none, sim, kHour);
  EXPECT_EQ(empty.n_obs, 0u);
  EXPECT_TRUE(std::isnan(empty.nse));
  EXPECT_TRUE(std::isnan(empty.kge));
  EXPECT_TRUE(std::isnan(empty.peak_error_pct));

  const std::vector<double> steady = {4, 4, 4};
  const SkillScores flat = skill(steady, sim, kHour);
  EXPECT_EQ(flat.n_obs, 3u);
  EXPECT_TRUE(std::isnan(flat.nse));  // the observations do not vary
  EXPECT_NEAR(flat.pbias_pct, 100 * (6.0 - 12.0) / 12.0, 1e-12);
}
