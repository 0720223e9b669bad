#include "../../src/routing/ReadAhead.hpp"
#include "routing/RouterFixtures.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <numeric>
#include <random>
#include <set>
#include <string>
#include <thread>

#include "reachwise/Error.hpp"

using namespace reachwise;
using namespace reachwise::routing;
using network::NetworkPlan;

namespace {

/// A provider that reads "from a file": every series is a function of the
/// reach and the kind, reach `bad` fails as a bad file would, reaches
/// divisible by 3 have no lateral series; it counts its reads.
class FileLike final : public ForcingProvider {
public:
  FileLike(std::size_t steps, ReadsOnDemand slow, std::uint32_t bad = 1u << 31) : steps_(steps), slow_(slow), bad_(bad) {}
  static double value(int kind, std::uint32_t reach, std::size_t n) { return kind * 1000.0 + reach + 0.001 * n; }
  bool inflow(std::uint32_t reach, std::span<double> out) const override { return read(0, reach, out); }
  bool lateral(std::uint32_t reach, std::span<double> out) const override { return read(1, reach, out); }
  ReadsOnDemand readsOnDemand() const override { return slow_; }
  mutable std::atomic<std::size_t> reads[2] = {0, 0};

private:
  bool read(int kind, std::uint32_t reach, std::span<double> out) const {
    EXPECT_EQ(out.size(), steps_);
    ++reads[kind];
    if (reach == bad_) {
      InputLocation at;
      at.file = "forcing.nc";
      at.reach_id = "R" + std::to_string(reach);
      throw InputError(at, "missing value (_FillValue) inside the series");
    }
    if (kind == 1 && reach % 3 == 0) {
      std::fill(out.begin(), out.end(), 0.0);
      return false;
    }
    for (std::size_t n = 0; n < out.size(); ++n) out[n] = value(kind, reach, n);
    return true;
  }
  std::size_t steps_;
  ReadsOnDemand slow_;
  std::uint32_t bad_;
};

/// Plan of `n` reaches with the given upstream lists (each index below its
/// reach's), every reach a 2 km channel.
NetworkPlan planOf(const std::vector<std::vector<std::uint32_t>>& ups) {
  const std::size_t n = ups.size();
  NetworkPlan p;
  std::vector<std::vector<std::uint32_t>> downs(n);
  for (std::uint32_t i = 0; i < n; ++i)
    for (const std::uint32_t u : ups[i]) downs[u].push_back(i);
  p.up_offset.push_back(0);
  p.down_offset.push_back(0);
  for (std::uint32_t i = 0; i < n; ++i) {
    p.reach_id.push_back("R" + std::to_string(i));
    p.fid.push_back(i);
    p.record.push_back(i);
    p.length_m.push_back(2000);
    hydraulics::SectionSpec s;
    s.bottom_width_m = 8;
    s.side_slope = 1;
    s.manning_n = 0.035;
    s.bed_slope = 0.001 + 0.0001 * (i % 7);
    p.section.push_back(hydraulics::Section::fromSpec(s));
    p.muskingum_k_s.push_back(std::nan(""));
    p.muskingum_x.push_back(std::nan(""));
    p.basin.push_back(0);
    p.strahler.push_back(1);
    p.top.push_back({double(i), 0});
    p.bottom.push_back({double(i), 1});
    for (const std::uint32_t u : ups[i]) p.up_reach.push_back(u), p.up_fraction.push_back(1.0);
    for (const std::uint32_t d : downs[i]) p.down_reach.push_back(d);
    p.up_offset.push_back(static_cast<std::uint32_t>(p.up_reach.size()));
    p.down_offset.push_back(static_cast<std::uint32_t>(p.down_reach.size()));
  }
  return p;
}

/// A random tree in topological order: reach i drains into a random later one.
NetworkPlan randomTree(std::size_t n, std::mt19937& rng) {
  std::vector<std::vector<std::uint32_t>> ups(n);
  for (std::uint32_t i = 0; i + 1 < n; ++i)
    ups[std::uniform_int_distribution<std::uint32_t>(i + 1, static_cast<std::uint32_t>(n - 1))(rng)].push_back(i);
  return planOf(ups);
}

}  // namespace

// The order worked by hand for a small network (plan order A..F):
// A, B, C headwaters; D below A and C; E below B; F below D and E.
// One thread routes A (D still waits for C), B and then E (ready), C and
// then D, and then F (E is done).
TEST(ReadAhead, RoutingOrderFollowsTheHeadwatersAndWhatEachMakesReady) {
  const NetworkPlan p = planOf({{}, {}, {}, {0, 2}, {1}, {3, 4}});
  EXPECT_EQ(routingOrder(p, std::vector<bool>(6, true)), (std::vector<std::uint32_t>{0, 1, 4, 2, 3, 5}));
  // Reaches routed elsewhere (another rank) are left out and not waited for.
  EXPECT_EQ(routingOrder(p, {true, false, true, true, true, true}), (std::vector<std::uint32_t>{0, 2, 3, 4, 5}));
}

TEST(ReadAhead, RoutingOrderIsATopologicalOrderOfEveryReach) {
  std::mt19937 rng(11);
  const NetworkPlan p = randomTree(500, rng);
  const std::vector<std::uint32_t> order = routingOrder(p, std::vector<bool>(p.size(), true));
  ASSERT_EQ(order.size(), p.size());
  std::vector<std::size_t> at(p.size(), p.size());
  for (std::size_t k = 0; k < order.size(); ++k) at[order[k]] = k;
  for (std::uint32_t i = 0; i < p.size(); ++i) {
    ASSERT_LT(at[i], p.size()) << "reach " << i << " missing";
    for (std::uint32_t k = p.up_offset[i]; k < p.up_offset[i + 1]; ++k)
      EXPECT_LT(at[p.up_reach[k]], at[i]) << "reach " << i << " before its upstream reach";
  }
}

// Asked in another order than read, every series arrives once as the
// provider reads it; a second ask, and kinds held in memory, go to the
// provider.
TEST(ReadAhead, HandsOverEachSeriesAsTheProviderGivesIt) {
  const std::size_t steps = 50, n = 300;
  const FileLike inner(steps, {false, true});
  std::vector<std::uint32_t> order(n);
  std::iota(order.begin(), order.end(), 0u);
  std::mt19937 rng(5);
  std::vector<std::uint32_t> asked = order;
  std::shuffle(asked.begin(), asked.end(), rng);
  // Room for ten series: the first ten are read before anything is asked
  // and handed over from memory, whatever the threads' timing.
  const ForcingReadAhead ahead(inner, order, steps, 10 * (steps * sizeof(double) + 64));
  for (int i = 0; i < 1000 && inner.reads[1].load() < 10; ++i) std::this_thread::sleep_for(std::chrono::milliseconds(10));
  ASSERT_GE(inner.reads[1].load(), 10u);
  std::vector<double> out(steps, -1.0);
  for (const std::uint32_t r : asked) {
    std::fill(out.begin(), out.end(), -1.0);
    const bool has = ahead.lateral(r, out);
    ASSERT_EQ(has, r % 3 != 0) << r;
    for (std::size_t k = 0; k < steps; ++k) ASSERT_EQ(out[k], has ? FileLike::value(1, r, k) : 0.0) << r;
    ASSERT_TRUE(ahead.inflow(r, out));  // not read ahead: straight from the provider
    EXPECT_EQ(out[7], FileLike::value(0, r, 7));
  }
  const ForcingReadAhead::Counts c = ahead.counts();
  EXPECT_EQ(c.ahead + c.on_demand, n);
  EXPECT_GE(c.ahead, 10u);
  EXPECT_EQ(inner.reads[0].load(), n);
  EXPECT_EQ(inner.reads[1].load(), n);  // each series read once, by one thread or the other
  ASSERT_TRUE(ahead.lateral(1, out));   // asked again: read again
  EXPECT_EQ(out[3], FileLike::value(1, 1, 3));
  EXPECT_EQ(inner.reads[1].load(), n + 1);
}

// The reading thread holds no more than its bound: with room for three
// series and nothing asked, it reads three and waits, until half the bound
// is free again (two series taken), then fills it again.
TEST(ReadAhead, HoldsNoMoreThanItsBound) {
  const std::size_t steps = 1000;
  const FileLike inner(steps, {true, false});
  std::vector<std::uint32_t> order(100);
  std::iota(order.begin(), order.end(), 0u);
  // Three series of 8 kB and their bookkeeping, not four.
  const ForcingReadAhead ahead(inner, order, steps, 3 * (steps * sizeof(double) + 64));
  const auto settle = [&](std::size_t reads) {
    for (int i = 0; i < 1000 && inner.reads[0].load() < reads; ++i)
      std::this_thread::sleep_for(std::chrono::milliseconds(10));
    std::this_thread::sleep_for(std::chrono::milliseconds(200));  // time to read more, were it allowed to
    return inner.reads[0].load();
  };
  EXPECT_EQ(settle(3), 3u);
  std::vector<double> out(steps);
  ASSERT_TRUE(ahead.inflow(0, out));
  EXPECT_EQ(settle(3), 3u);  // two of three held: not yet
  ASSERT_TRUE(ahead.inflow(1, out));
  EXPECT_EQ(settle(5), 5u);  // one held: two more read
  EXPECT_EQ(ahead.counts().ahead, 2u);
  EXPECT_EQ(out[9], FileLike::value(0, 1, 9));
}

// A series the provider failed to read fails when it is asked for, with
// the provider's message, and not before.
TEST(ReadAhead, AFailedReadFailsWhenTheSeriesIsAskedFor) {
  const std::size_t steps = 20;
  const FileLike inner(steps, {false, true}, 4);
  std::vector<std::uint32_t> order{0, 1, 2, 3, 4, 5, 6};
  const ForcingReadAhead ahead(inner, order, steps);
  std::vector<double> out(steps);
  for (int i = 0; i < 1000 && inner.reads[1].load() < order.size(); ++i)
    std::this_thread::sleep_for(std::chrono::milliseconds(5));
  for (const std::uint32_t r : {6u, 5u, 2u}) EXPECT_NO_THROW(ahead.lateral(r, out)) << r;
  try {
    ahead.lateral(4, out);
    ADD_FAILURE() << "the failed read was not reported";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().reach_id, "R4");
    EXPECT_NE(std::string(e.what()).find("_FillValue"), std::string::npos) << e.what();
  }
}

// Routing with forcing read ahead gives the run of forcing held in memory,
// to the bit, on one and two threads, and every series comes through the
// reading thread or the provider once.
TEST(ReadAhead, TheRouterGivesTheSameResultsWithForcingReadAhead) {
  std::mt19937 rng(3);
  const std::size_t steps = 96;
  const NetworkPlan p = randomTree(400, rng);
  MemoryForcing memory;
  memory.inflow_m3s.resize(p.size());
  memory.lateral_m3s.resize(p.size());
  std::uniform_real_distribution<double> u(0, 1);
  for (std::uint32_t i = 0; i < p.size(); ++i) {
    if (p.isHeadwater(i)) memory.inflow_m3s[i] = routertest::storm(steps, 1 + u(rng), 20 * u(rng), 5 * u(rng), 12);
    if (i % 3 != 0) memory.lateral_m3s[i] = routertest::storm(steps, 0.1, 3 * u(rng), 10 * u(rng), 20);
  }
  /// The same series, said to be read from a file.
  struct Slow final : ForcingProvider {
    const MemoryForcing& m;
    explicit Slow(const MemoryForcing& f) : m(f) {}
    bool inflow(std::uint32_t r, std::span<double> out) const override { return m.inflow(r, out); }
    bool lateral(std::uint32_t r, std::span<double> out) const override { return m.lateral(r, out); }
    ReadsOnDemand readsOnDemand() const override { return {true, true}; }
  } slow(memory);
  routertest::Capture reference;
  NetworkRouteOptions opt;
  opt.threads = 1;
  const NetworkResults r0 = routeNetwork(p, routertest::hourly(steps), memory, opt, &reference);
  EXPECT_EQ(r0.series_read_ahead + r0.series_read_on_demand, 0u);
  for (const unsigned threads : {1u, 2u}) {
    routertest::Capture got;
    opt.threads = threads;
    const NetworkResults r = routeNetwork(p, routertest::hourly(steps), slow, opt, &got);
    EXPECT_EQ(r.series_read_ahead + r.series_read_on_demand, 2 * p.size()) << threads;
    ASSERT_EQ(got.q.size(), p.size());
    for (std::uint32_t i = 0; i < p.size(); ++i) {
      ASSERT_EQ(got.q[i], reference.q[i]) << "reach " << i << ", threads " << threads;
      EXPECT_EQ(r.reaches[i].volume.lateral_m3, r0.reaches[i].volume.lateral_m3);
    }
  }
}
