// The shared time stepping takes cells out of row order (two rows at once,
// or along diagonals for a cell that carries its values) so that
// independent cells overlap. These tests hold it to a plain row-by-row
// sweep written here: every outflow, volume total, end state and count
// must be equal to the bit, on every grid shape, with and without lateral
// inflow, including rows whose result is clamped at zero.

#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <vector>

#include "../../src/routing/Sweep.hpp"

namespace reachwise::routing {
namespace {

// Nonlinear in every input, so a cell fed a wrong neighbour, a wrong time
// level or another row's lateral share gives a different number. Results go
// below zero now and then (the lateral term can be strongly negative).
double weightOf(double q) { return 0.3 + 0.1 * std::sin(q); }
double areaOfFlow(double q) { return 2.0 * q + std::sqrt(std::abs(q) + 1.0); }
double cellValue(double left_new, double left_old, double old, double lat, double x_new, double x_old,
                 double a_new, double a_old, double a_out) {
  return 0.45 * left_new + 0.3 * left_old * x_old + 0.2 * old + 0.05 * std::cos(a_new - a_old) +
         0.01 * a_out * x_new + 3.0 * lat;
}

// A cell with the plain interface (the sweep takes it two rows at a time).
struct PlainCell {
  double operator()(double left_new, double left_old, double old, double lat) const {
    return cellValue(left_new, left_old, old, lat, weightOf(left_new), weightOf(left_old), areaOfFlow(left_new),
                     areaOfFlow(left_old), areaOfFlow(old));
  }
  double storage(const std::vector<double>& q) const {
    double s = 0;
    for (double v : q) s += v;
    return s;
  }
};

// The same cell carrying its weight and area along with the flows; counts
// the new flows it is told about (Count), as the real cell counts clamps.
struct CarryingCell {
  std::uint64_t* counted;
  struct Carry {
    double x, a;
  };
  template <bool Count>
  Carry carry(double q, double area_q) const {
    if constexpr (Count) ++*counted;
    return {weightOf(q), area_q};
  }
  double areaOf(double q) const { return areaOfFlow(q); }
  double operator()(double left_new, double left_old, double old, double lat, const Carry& in_new,
                    const Carry& in_old, double area_old, double& area_out) const {
    const double v = cellValue(left_new, left_old, old, lat, in_new.x, in_old.x, in_new.a, in_old.a, area_old);
    area_out = areaOfFlow(v);
    return v;
  }
  double storage(const std::vector<double>& q) const { return PlainCell{}.storage(q); }
};
static_assert(CarriesFlowValues<CarryingCell>);
static_assert(!CarriesFlowValues<PlainCell>);

struct Result {
  std::vector<double> out, q;
  Totals tot;
  std::uint64_t clamps = 0, cells = 0;
};

// The steady start: lateral inflow accumulating linearly along the reach.
std::vector<double> start(std::uint32_t m, const std::vector<double>& in, const std::vector<double>& lat) {
  std::vector<double> q(m + 1);
  for (std::uint32_t j = 0; j <= m; ++j) q[j] = in[0] + (lat.empty() ? 0.0 : lat[0]) * j / m;
  return q;
}

// Row by row: row s of step n (s = 1..k) has the top inflow linear in time
// at its end, and the lateral share the mean of its end values over m.
Result rowByRow(std::uint32_t m, std::uint32_t k, const std::vector<double>& in, const std::vector<double>& lat,
                double dt, bool clamp) {
  Result r;
  r.q = start(m, in, lat);
  r.out.assign(in.size(), 0.0);
  r.out[0] = r.q[m];
  const double dts = dt / k;
  for (std::size_t n = 0; n + 1 < in.size(); ++n) {
    for (std::uint32_t s = 1; s <= k; ++s) {
      const double f = double(s) / k, f0 = double(s - 1) / k;
      const double top = in[n] + (in[n + 1] - in[n]) * f;
      double share = 0.0;
      if (!lat.empty()) {
        const auto at = [&](double g) { return lat[n] + (lat[n + 1] - lat[n]) * g; };
        share = 0.5 * (at(f0) + at(f)) / m;
      }
      std::vector<double> next(m + 1);
      next[0] = top;
      for (std::uint32_t j = 1; j <= m; ++j) {
        double v = PlainCell{}(next[j - 1], r.q[j - 1], r.q[j], share);
        ++r.cells;
        if (clamp && !(v >= 0)) ++r.clamps, v = 0.0;
        next[j] = v;
      }
      r.tot.out += 0.5 * dts * (r.q[m] + next[m]);
      r.q = next;
    }
    r.out[n + 1] = r.q[m];
    r.tot.in += 0.5 * dt * (in[n] + in[n + 1]);
    if (!lat.empty()) r.tot.lat += 0.5 * dt * (lat[n] + lat[n + 1]);
  }
  return r;
}

std::vector<double> wave(std::size_t n, double base, double rise, double phase) {
  std::vector<double> v(n);
  for (std::size_t i = 0; i < n; ++i) v[i] = base + rise * std::pow(std::sin(0.7 * double(i) + phase), 2);
  return v;
}

void expectSame(const Result& want, const Result& got, const std::string& what) {
  ASSERT_EQ(want.out.size(), got.out.size()) << what;
  for (std::size_t i = 0; i < want.out.size(); ++i) EXPECT_EQ(want.out[i], got.out[i]) << what << " output " << i;
  ASSERT_EQ(want.q.size(), got.q.size()) << what;
  for (std::size_t j = 0; j < want.q.size(); ++j) EXPECT_EQ(want.q[j], got.q[j]) << what << " section " << j;
  EXPECT_EQ(want.tot.in, got.tot.in) << what;
  EXPECT_EQ(want.tot.lat, got.tot.lat) << what;
  EXPECT_EQ(want.tot.out, got.tot.out) << what;
  EXPECT_EQ(want.clamps, got.clamps) << what;
}

TEST(SweepOrder, EveryGridGivesTheRowByRowResultToTheBit) {
  const double dt = 900.0;
  int clamped_cases = 0;
  for (std::uint32_t m = 1; m <= 9; ++m) {
    for (std::uint32_t k = 1; k <= 5; ++k) {
      for (std::size_t samples : {std::size_t{1}, std::size_t{2}, std::size_t{3}, std::size_t{8}}) {
        for (int lateral_kind = 0; lateral_kind < 3; ++lateral_kind) {
          const std::vector<double> in = wave(samples, 5.0, 40.0, 0.3 * m + k);
          // none; positive; strongly negative (results below zero: clamped)
          const std::vector<double> lat = lateral_kind == 0   ? std::vector<double>{}
                                          : lateral_kind == 1 ? wave(samples, 1.0, 6.0, 1.1)
                                                              : wave(samples, -30.0, 10.0, 2.0);
          const std::string what = "m=" + std::to_string(m) + " k=" + std::to_string(k) +
                                   " samples=" + std::to_string(samples) + " lateral=" + std::to_string(lateral_kind);
          const Result want = rowByRow(m, k, in, lat, dt, true);
          if (want.clamps > 0) ++clamped_cases;

          Result plain;
          plain.q = start(m, in, lat);
          plain.out.assign(samples, 0.0);
          sweep(m, k, in, lat, dt, plain.q, plain.out, plain.tot,
                [&plain](double a, double b, double c, double d) {
                  const double v = PlainCell{}(a, b, c, d);
                  if (v >= 0) return v;
                  ++plain.clamps;
                  return 0.0;
                });
          expectSame(want, plain, "two rows at a time, " + what);

          Result carried;
          carried.q = start(m, in, lat);
          carried.out.assign(samples, 0.0);
          sweep(m, k, in, lat, dt, carried.q, carried.out, carried.tot, CarryingCell{&carried.cells},
                &carried.clamps);
          expectSame(want, carried, "diagonals, " + what);
          // One counted evaluation per flow that feeds a cell: one per cell.
          EXPECT_EQ(want.cells, carried.cells) << what;
        }
      }
    }
  }
  EXPECT_GT(clamped_cases, 0);  // the clamp path was exercised
}

}  // namespace
}  // namespace reachwise::routing
