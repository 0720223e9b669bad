#include "reachwise/routing/LevelPool.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <random>
#include <vector>

#include "reachwise/Error.hpp"

using namespace reachwise;
using namespace reachwise::routing;

namespace {

constexpr double kHour = 3600.0;

std::vector<double> sample(const std::function<double(double)>& f, double dt, std::size_t n) {
  std::vector<double> v(n);
  for (std::size_t i = 0; i < n; ++i) v[i] = f(static_cast<double>(i) * dt);
  return v;
}

double maxAbsDiff(const std::vector<double>& a, const std::vector<double>& b) {
  double m = 0;
  for (std::size_t i = 0; i < a.size(); ++i) m = std::max(m, std::abs(a[i] - b[i]));
  return m;
}

LevelPool linearLake(double k_s) { return LevelPool(LevelStorage::prismatic(1e6, 0.0), OutflowRule::linear(k_s)); }

// A smooth flood: base flow plus a gamma-shaped wave peaking at t_p.
double flood(double t, double base, double peak, double t_p) {
  const double x = t / t_p;
  return base + (peak - base) * std::pow(x * std::exp(1 - x), 4);
}

/// Independent reference: classical RK4 on dS/dt = I(t) − C L (S/A)^1.5 for
/// a prismatic lake of area A whose storage is counted from the crest, with
/// a 1 s step; I(t) linear between the samples (as the program takes it).
std::vector<double> rk4WeirOutflow(const std::vector<double>& inflow, double dt, double area, double c,
                                   double length, double s0) {
  const auto q = [&](double s) { return s > 0 ? c * length * std::pow(s / area, 1.5) : 0.0; };
  const auto in = [&](double t) {
    const double u = t / dt;
    std::size_t i = static_cast<std::size_t>(std::floor(u));
    if (i + 1 >= inflow.size()) return inflow.back();
    const double w = u - static_cast<double>(i);
    return inflow[i] + w * (inflow[i + 1] - inflow[i]);
  };
  const auto f = [&](double t, double s) { return in(t) - q(s); };
  const int per = static_cast<int>(std::lround(dt));  // 1 s steps per sample
  std::vector<double> out{q(s0)};
  double s = s0, t = 0;
  for (std::size_t n = 0; n + 1 < inflow.size(); ++n) {
    for (int j = 0; j < per; ++j) {
      const double h = 1.0;
      const double k1 = f(t, s), k2 = f(t + h / 2, s + h / 2 * k1), k3 = f(t + h / 2, s + h / 2 * k2),
                   k4 = f(t + h, s + h * k3);
      s += h / 6 * (k1 + 2 * k2 + 2 * k3 + k4);
      t += h;
    }
    out.push_back(q(s));
  }
  return out;
}

}  // namespace

// Linear reservoir O = S/k filled from empty by a constant inflow I:
// O(t) = I (1 − e^{−t/k}) exactly. The trapezoidal rule's amplification
// (1 − r/2)/(1 + r/2), r = Δt/k, differs from e^{−r} by −r³/12, so the
// largest error of the outflow is I r²/(12 e) to leading order (at t = k).
// The measured error must match that within 10 % at r = 0.1 and 0.05, and
// halving Δt must divide it by 4 (second order).
TEST(LevelPool, LinearReservoirStepMatchesClosedFormAtSecondOrder) {
  const double k = 5 * kHour, inflow = 100.0;
  const LevelPool lake = linearLake(k);
  LevelPoolOptions from_empty;
  from_empty.initial_level_m = 0.0;
  double previous = 0;
  for (const double r : {0.1, 0.05, 0.025}) {
    const double dt = r * k;
    const std::size_t n = static_cast<std::size_t>(std::lround(6 * k / dt)) + 1;
    const LevelPoolResult res = lake.route(std::vector<double>(n, inflow), dt, from_empty);
    EXPECT_EQ(res.substeps, 1u) << "Δt < k needs no sub-steps";
    const auto exact = sample([&](double t) { return inflow * (1 - std::exp(-t / k)); }, dt, n);
    const double err = maxAbsDiff(res.outflow_m3s, exact);
    const double predicted = inflow * r * r / (12 * std::exp(1.0));
    EXPECT_NEAR(err / predicted, 1.0, 0.1) << "r = " << r << " error " << err;
    if (previous > 0) {
      EXPECT_NEAR(previous / err, 4.0, 0.2) << "r = " << r;
    }
    previous = err;
    // Level of the prismatic lake: S / A with S = k O.
    for (std::size_t i = 0; i < n; ++i) EXPECT_NEAR(res.level_m[i], res.storage_m3[i] / 1e6, 1e-12);
  }
}

// Exponential inflow I = I_p e^{−t/T} into an empty linear reservoir:
// O(t) = I_p (e^{−t/T} − e^{−t/k}) / (1 − k/T). The inflow is sampled and
// taken linear between samples (another second-order error), so the check
// is convergence: errors at Δt, Δt/2, Δt/4 fall by 4 (±10 %), and the
// finest (Δt = k/40) is below 0.05 % of the peak (measured 0.026 %).
TEST(LevelPool, LinearReservoirExponentialInflowConvergesAtSecondOrder) {
  const double k = 5 * kHour, tin = 3 * kHour, ip = 500.0;
  const LevelPool lake = linearLake(k);
  LevelPoolOptions from_empty;
  from_empty.initial_level_m = 0.0;
  const auto exact_f = [&](double t) { return ip * (std::exp(-t / tin) - std::exp(-t / k)) / (1 - k / tin); };
  std::vector<double> errors;
  double peak = 0;
  for (const double dt : {1800.0, 900.0, 450.0}) {
    const std::size_t n = static_cast<std::size_t>(std::lround(30 * kHour / dt)) + 1;
    const auto in = sample([&](double t) { return ip * std::exp(-t / tin); }, dt, n);
    const LevelPoolResult res = lake.route(in, dt, from_empty);
    const auto exact = sample(exact_f, dt, n);
    peak = *std::max_element(exact.begin(), exact.end());
    errors.push_back(maxAbsDiff(res.outflow_m3s, exact));
  }
  EXPECT_NEAR(errors[0] / errors[1], 4.0, 0.4);
  EXPECT_NEAR(errors[1] / errors[2], 4.0, 0.4);
  EXPECT_LT(errors[2], 5e-4 * peak) << errors[2];
  std::printf("exponential inflow: errors %.4g %.4g %.4g m3/s, peak %.4g\n", errors[0], errors[1], errors[2], peak);
}

// A lake whose response time (k = 10 min) is short against the step (1 h):
// the whole step would ring ((1 − 3)/(1 + 3) = −0.5 per step), so the
// routing sub-steps (h <= k: 6 sub-steps of r = h/k = 1). Filled from
// empty by a constant inflow, the outflow must then rise monotonically,
// never pass the inflow, and stay within 0.2 % of I of the closed form at
// the samples (at r = 1 the step's factor is 1/3 against e^{-1}; after the
// 6 sub-steps of the first sample (1/3)^6 against e^{-6} is 0.11 % of I).
// Forced to take whole steps it overshoots: the check can fail.
TEST(LevelPool, FastLakeSubStepsInsteadOfRinging) {
  const double k = 600.0, dt = kHour, inflow = 50.0;
  const LevelPool lake = linearLake(k);
  LevelPoolOptions opt;
  opt.initial_level_m = 0.0;
  const std::size_t n = 12;
  const LevelPoolResult res = lake.route(std::vector<double>(n, inflow), dt, opt);
  EXPECT_EQ(res.substeps, 6u);
  EXPECT_EQ(res.steps_refined, 0u);
  const auto exact = sample([&](double t) { return inflow * (1 - std::exp(-t / k)); }, dt, n);
  EXPECT_LT(maxAbsDiff(res.outflow_m3s, exact), 0.002 * inflow);
  for (std::size_t i = 1; i < n; ++i) {
    EXPECT_GE(res.outflow_m3s[i], res.outflow_m3s[i - 1]) << i;
    EXPECT_LE(res.outflow_m3s[i], inflow * (1 + 1e-12)) << i;
  }
  opt.max_step_over_response = 1e9;  // whole steps
  const LevelPoolResult ringing = lake.route(std::vector<double>(n, inflow), dt, opt);
  EXPECT_EQ(ringing.substeps, 1u);
  EXPECT_GT(*std::max_element(ringing.outflow_m3s.begin(), ringing.outflow_m3s.end()), 1.2 * inflow);
}

// Weir lakes (O = C L (h − h_c)^1.5, prismatic, storage from the crest)
// against RK4 with a 1 s step written above: a large lake (response time
// hours, whole steps) and a small one (response time minutes at the peak,
// sub-steps). Peak outflow within 0.5 %, every sample within 0.5 % of the
// peak, peak time within one step.
TEST(LevelPool, WeirLakeMatchesRungeKutta) {
  const double c = kBroadCrestedWeirCoefficient, length = 20.0, dt = 900.0, crest = 100.0;
  const std::size_t n = 97;  // 24 h
  const auto in = sample([](double t) { return flood(t, 10.0, 300.0, 6 * kHour); }, dt, n);
  for (const double area : {2e6, 5e4}) {
    const LevelPool lake(LevelStorage::prismatic(area, crest), OutflowRule::weir(crest, length, c), "lake A");
    const LevelPoolResult res = lake.route(in, dt);
    // Steady start: head (I0 / (C L))^(2/3).
    const double head0 = std::pow(in[0] / (c * length), 2.0 / 3.0);
    EXPECT_NEAR(res.level_m[0], crest + head0, 1e-9);
    EXPECT_NEAR(res.outflow_m3s[0], in[0], 1e-9 * in[0]);
    const auto ref = rk4WeirOutflow(in, dt, area, c, length, area * head0);
    const auto pk = std::max_element(res.outflow_m3s.begin(), res.outflow_m3s.end());
    const auto rpk = std::max_element(ref.begin(), ref.end());
    EXPECT_NEAR(*pk / *rpk, 1.0, 0.005) << "area " << area;
    EXPECT_LT(maxAbsDiff(res.outflow_m3s, ref), 0.005 * *rpk) << "area " << area;
    EXPECT_LE(std::abs((pk - res.outflow_m3s.begin()) - (rpk - ref.begin())), 1) << "area " << area;
    // The lake attenuates: the peak outflow is below the peak inflow.
    EXPECT_LT(*pk, *std::max_element(in.begin(), in.end()));
    if (area < 1e5) {
      EXPECT_GT(res.substeps, 1u) << "the small lake's response time is minutes";
    } else {
      EXPECT_EQ(res.substeps, 1u);
    }
    RecordProperty(area > 1e5 ? "large_peak_ratio" : "small_peak_ratio", std::to_string(*pk / *rpk));
    std::printf("weir lake area %.0f m2: peak %.4f vs RK4 %.4f (ratio %.6f), max diff %.4g, substeps %zu\n",
                area, *pk, *rpk, *pk / *rpk, maxAbsDiff(res.outflow_m3s, ref), res.substeps);
  }
}

// Continuity: in − out − ΔS closes to round-off (1e-9 of the inflow volume)
// for every kind of rule, with and without sub-steps.
TEST(LevelPool, VolumeBalanceClosesForEveryRule) {
  const double dt = 900.0;
  const auto in = sample([](double t) { return flood(t, 5.0, 400.0, 8 * kHour); }, dt, 193);
  const LevelStorage prism = LevelStorage::prismatic(3e5, 50.0);
  const LevelStorage table = LevelStorage::table({50, 51, 52, 54, 58}, {0, 1e5, 3e5, 9e5, 3e6});
  std::vector<LevelPool> lakes{
      LevelPool(prism, OutflowRule::weir(50.5, 15.0)),
      LevelPool(table, OutflowRule::weir(51.0, 8.0, 1.8)),
      LevelPool(table, OutflowRule::levelTable({50.2, 51, 52, 53, 55}, {0, 5, 40, 40, 300})),
      LevelPool(prism, OutflowRule::storageTable({0, 1e5, 5e5, 1e6}, {0, 2, 60, 250})),
      LevelPool(prism, OutflowRule::linear(1800.0)),
      LevelPool(table, OutflowRule::linear(300.0)),
  };
  for (std::size_t i = 0; i < lakes.size(); ++i) {
    const LevelPoolResult res = lakes[i].route(in, dt);
    EXPECT_GT(res.volume_in_m3, 0);
    EXPECT_LT(std::abs(res.volume_error_m3), 1e-9 * res.volume_in_m3)
        << "lake " << i << ": error " << res.volume_error_m3 << " of " << res.volume_in_m3;
    EXPECT_NEAR(res.storage_change_m3, res.storage_m3.back() - res.storage_m3.front(), 0.0);
    for (double o : res.outflow_m3s) EXPECT_GE(o, 0.0);
    std::printf("lake %zu: volume error %.3g of %.6g m3, substeps %zu\n", i, res.volume_error_m3,
                res.volume_in_m3, res.substeps);
  }
}

// Constant inflow from the default (steady) start passes straight through.
TEST(LevelPool, SteadyInflowStaysSteady) {
  const LevelStorage prism = LevelStorage::prismatic(1e5, 10.0);
  std::vector<LevelPool> lakes{
      LevelPool(prism, OutflowRule::weir(10.0, 5.0)),
      LevelPool(prism, OutflowRule::levelTable({10.0, 11, 12}, {0, 10, 80})),
      LevelPool(prism, OutflowRule::storageTable({0, 1e5, 2e5}, {0, 10, 80})),
      LevelPool(prism, OutflowRule::linear(3600)),
  };
  for (std::size_t i = 0; i < lakes.size(); ++i) {
    const LevelPoolResult res = lakes[i].route(std::vector<double>(20, 37.5), 600.0);
    for (double o : res.outflow_m3s) EXPECT_NEAR(o, 37.5, 1e-10) << "lake " << i;
  }
  // Zero inflow: a weir lake starts full to its crest and stays there.
  const LevelPoolResult dry = lakes[0].route(std::vector<double>(5, 0.0), 600.0);
  EXPECT_NEAR(dry.level_m.front(), 10.0, 1e-12);
  EXPECT_EQ(dry.outflow_m3s.back(), 0.0);
}

// Monotone in the inflow: adding non-negative inflow that leaves the
// largest inflow as it was (so both runs take the same sub-step grid)
// never lowers the outflow at any sample: each step's map from the old
// state and inflows to the new state is non-decreasing while the sub-step
// is at most twice the response time. Slack 1e-12 of the peak: each step's
// root is solved to 8 ε of its scale.
TEST(LevelPool, HigherInflowNeverLowersOutflow) {
  std::mt19937 rng(2718);
  std::uniform_real_distribution<double> u(0, 1);
  const LevelStorage table = LevelStorage::table({0, 1, 2, 4}, {0, 2e4, 8e4, 4e5});
  std::vector<LevelPool> lakes{
      LevelPool(LevelStorage::prismatic(4e4, 0), OutflowRule::weir(0.0, 12.0)),
      LevelPool(table, OutflowRule::levelTable({0.3, 1, 2, 3}, {0, 10, 10, 120})),
      LevelPool(table, OutflowRule::storageTable({0, 2e4, 1e5}, {0, 30, 200})),
      LevelPool(table, OutflowRule::linear(400.0)),
  };
  for (int trial = 0; trial < 40; ++trial) {
    std::vector<double> a(60), b(60);
    for (std::size_t i = 0; i < a.size(); ++i) {
      a[i] = 200 * u(rng) * u(rng);
      b[i] = a[i] + (u(rng) < 0.3 ? 100 * u(rng) : 0.0);
    }
    a[7] = 300;  // the largest inflow of both
    for (double& v : b) v = std::min(v, 300.0);
    b[7] = 300;
    for (std::size_t l = 0; l < lakes.size(); ++l) {
      const auto ra = lakes[l].route(a, 1800.0), rb = lakes[l].route(b, 1800.0);
      const double peak = *std::max_element(rb.outflow_m3s.begin(), rb.outflow_m3s.end());
      for (std::size_t i = 0; i < a.size(); ++i)
        ASSERT_GE(rb.outflow_m3s[i], ra.outflow_m3s[i] - 1e-12 * peak)
            << "lake " << l << " trial " << trial << " sample " << i;
    }
  }
}

// A storage–outflow table through (0, 0) and (S, S/k), extended above,
// is the linear reservoir: the same series to round-off.
TEST(LevelPool, StraightStorageTableIsTheLinearReservoir) {
  const double k = 2 * kHour;
  const LevelStorage prism = LevelStorage::prismatic(2e5, 0.0);
  const LevelPool lin(prism, OutflowRule::linear(k));
  const LevelPool tab(prism, OutflowRule::storageTable({0, 1e5}, {0, 1e5 / k}));
  const auto in = sample([](double t) { return flood(t, 3.0, 90.0, 5 * kHour); }, 600.0, 100);
  const auto a = lin.route(in, 600.0), b = tab.route(in, 600.0);
  EXPECT_LT(maxAbsDiff(a.outflow_m3s, b.outflow_m3s), 1e-9 * 90);
  EXPECT_GT(b.samples_above_table, 0u);
}

namespace {
template <class F>
void expectInvalid(F&& f, const std::string& quantity, const std::string& text = {}) {
  try {
    f();
    ADD_FAILURE() << "no InvalidParameter for " << quantity;
  } catch (const InvalidParameter& e) {
    EXPECT_EQ(e.quantity(), quantity) << e.what();
    if (!text.empty()) {
      EXPECT_NE(std::string(e.what()).find(text), std::string::npos) << e.what();
    }
  }
}
}  // namespace

// Handbook worked example of the storage-indication method: Chow, Maidment
// & Mays (1988), *Applied Hydrology*, Examples 8.2.1 and 8.2.2 (inputs from
// memory): a detention basin of 1 acre (43 560 ft2) with vertical sides,
// emptied by a pipe whose head–discharge pairs are tabulated every 0.5 ft,
// initially empty, a triangular inflow rising 60 cfs per 10 min to 360 cfs at
// 60 min and falling to 0 at 150 min, routed with Δt = 10 min. The units are
// the handbook's (ft, cfs): the method is unit-free.
//
// The reference is the handbook's own tabular procedure, written here
// independently of the program: the storage-indication column 2S/Δt + O
// against O, one step per Δt, O(n+1) by linear interpolation in that column.
TEST(LevelPool, HandbookDetentionBasinExample) {
  const std::vector<double> head_ft = {0,   0.5, 1,   1.5, 2,   2.5, 3,   3.5, 4,   4.5, 5,
                                       5.5, 6,   6.5, 7,   7.5, 8,   8.5, 9,   9.5, 10};
  const std::vector<double> q_cfs = {0,   3,   8,   17,  30,  43,  60,  78,  97,  117, 137,
                                     156, 173, 190, 205, 218, 231, 242, 253, 264, 275};
  const double area_ft2 = 43560, dt = 600;
  std::vector<double> inflow = {0, 60, 120, 180, 240, 300, 360, 320, 280, 240, 200, 160, 120, 80, 40, 0};
  inflow.resize(inflow.size() + 8, 0.0);

  // The handbook's table: N = 2S/Δt + O at every tabulated head.
  std::vector<double> indication(head_ft.size());
  for (std::size_t k = 0; k < head_ft.size(); ++k) indication[k] = 2 * area_ft2 * head_ft[k] / dt + q_cfs[k];
  const auto outflowFor = [&](double n) {
    std::size_t k = 1;
    while (k + 1 < indication.size() && indication[k] < n) ++k;
    return q_cfs[k - 1] + (q_cfs[k] - q_cfs[k - 1]) * (n - indication[k - 1]) / (indication[k] - indication[k - 1]);
  };
  std::vector<double> expected{0.0};
  double o = 0, minus = 0;  // minus = 2S/Δt − O
  for (std::size_t n = 0; n + 1 < inflow.size(); ++n) {
    const double plus = inflow[n] + inflow[n + 1] + minus;
    o = outflowFor(plus);
    minus = plus - 2 * o;
    expected.push_back(o);
  }

  const LevelPool basin(LevelStorage::prismatic(area_ft2, 0.0), OutflowRule::levelTable(head_ft, q_cfs));
  LevelPoolOptions one_step;  // the handbook takes one step per Δt: no sub-steps
  one_step.max_step_over_response = 1e12;
  one_step.initial_level_m = 0.0;
  const LevelPoolResult r = basin.route(inflow, dt, one_step);
  ASSERT_EQ(r.substeps, 1u);
  // The same arithmetic in another order: equal to round-off.
  EXPECT_LT(maxAbsDiff(r.outflow_m3s, expected), 1e-9 * 360);

  // The published result (from memory): the outflow peaks at about 270 cfs,
  // 80 min after the start, 20 min after the inflow peak.
  const auto peak = std::max_element(r.outflow_m3s.begin(), r.outflow_m3s.end());
  EXPECT_NEAR(*peak, 270.0, 1.0);
  EXPECT_EQ(peak - r.outflow_m3s.begin(), 8);

  // Sub-stepped (about 11 sub-steps per Δt) the result nears the continuous
  // solution; the one-step peak is already within 0.5 % of it, because the
  // step is short against the basin's shortest response time dS/dO = 43 560
  // ft2 × 0.5 ft / 20 cfs ≈ 18 min (the trapezoidal rule's error grows with
  // (Δt/τ)²).
  LevelPoolOptions sub_stepped;
  sub_stepped.max_step_over_response = 0.05;
  sub_stepped.initial_level_m = 0.0;
  const LevelPoolResult fine = basin.route(inflow, dt, sub_stepped);
  EXPECT_GT(fine.substeps, 5u);
  const double fine_peak = *std::max_element(fine.outflow_m3s.begin(), fine.outflow_m3s.end());
  EXPECT_NEAR(fine_peak, *peak, 0.005 * *peak);
  EXPECT_NEAR(fine.volume_error_m3, 0.0, 1e-9 * fine.volume_in_m3);
}

TEST(LevelPool, InvalidInputsNameTheQuantity) {
  const LevelStorage prism = LevelStorage::prismatic(1e5, 0.0);
  expectInvalid([] { LevelStorage::prismatic(-5, 0); }, "area_m2", "-5");
  expectInvalid([] { LevelStorage::prismatic(std::nan(""), 0); }, "area_m2");
  expectInvalid([] { LevelStorage::table({0, 1, 1}, {0, 5, 9}); }, "level_storage", "row 3");
  expectInvalid([] { LevelStorage::table({0, 1, 2}, {0, 5, 4}); }, "level_storage", "must increase");
  expectInvalid([] { LevelStorage::table({0, 1}, {3, 5}); }, "level_storage", "first storage must be 0");
  expectInvalid([&] { LevelPool(prism, OutflowRule{}, "lake 7"); }, "outflow_rule", "lake 7");
  expectInvalid([&] { LevelPool(prism, OutflowRule::levelTable({0, 1, 2}, {0, 9, 4}), "lake 7"); },
                "level_outflow", "must not decrease");
  expectInvalid([&] { LevelPool(prism, OutflowRule::levelTable({0, 2, 1}, {0, 1, 4})); }, "level_outflow",
                "must increase");
  expectInvalid([&] { LevelPool(prism, OutflowRule::levelTable({0, 1}, {3, 4})); }, "level_outflow",
                "first outflow must be 0");
  expectInvalid([&] { LevelPool(prism, OutflowRule::levelTable({0, 1}, {0, 0})); }, "level_outflow",
                "every outflow is 0");
  expectInvalid([&] { LevelPool(prism, OutflowRule::storageTable({0, 1e4}, {0, -1})); }, "storage_outflow",
                "negative");
  expectInvalid([&] { LevelPool(prism, OutflowRule::linear(0)); }, "k_h");
  expectInvalid([&] { LevelPool(prism, OutflowRule::weir(1, 0)); }, "weir_length_m");
  expectInvalid([&] { LevelPool(prism, OutflowRule::weir(1, 5, -1.7)); }, "weir_coefficient");
  expectInvalid([&] { LevelPool(prism, OutflowRule::weir(-1, 5), "lake 3"); }, "crest_level_m",
                "lake 3: crest -1 m lies below");
  const LevelPool ok(prism, OutflowRule::weir(0, 5), "lake 9");
  expectInvalid([&] { ok.route({1, -2, 3}, 60); }, "inflow", "sample 1");
  expectInvalid([&] { ok.route({1, 2}, 0); }, "dt");
  expectInvalid([&] { ok.route({}, 60); }, "inflow");
  LevelPoolOptions low;
  low.initial_level_m = -3;
  expectInvalid([&] { ok.route({1, 2}, 60, low); }, "initial_level_m", "lake 9");
  // A table whose outflow stops rising cannot pass a larger steady inflow.
  const LevelPool capped(prism, OutflowRule::storageTable({0, 1e4, 2e4}, {0, 5, 5}), "lake 4");
  expectInvalid([&] { capped.route({9, 9}, 60); }, "initial_level_m", "lake 4");
}
