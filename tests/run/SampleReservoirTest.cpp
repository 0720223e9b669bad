// The demo's reservoir (sample-network/lakes.gpkg, RES1): attached where
// the sample-network README puts its dam, routed as an independent
// integration of its weir says it should be, and attenuating the
// tributary's flood by the share the scenario was designed for.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <set>
#include <string>
#include <vector>

#include "reachwise/run/Network.hpp"
#include "reachwise/run/Route.hpp"
#include "reachwise/run/RoutedLakes.hpp"

using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

run::RouteRequest demoRequest(bool with_lakes) {
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  if (with_lakes) r.network.lakes = kSample + "lakes.gpkg";
  r.forcing.inflow = kSample + "inflow.csv";
  r.forcing.lateral = kSample + "lateral.csv";
  return r;
}

/// The reservoir as the file holds it, read with OGR (not the project's reader).
struct Reservoir {
  std::string id;
  double area_m2 = 0, crest_m = 0, length_m = 0;
};

Reservoir readReservoir() {
  GDALAllRegister();
  GDALDatasetUniquePtr ds(GDALDataset::Open((kSample + "lakes.gpkg").c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  Reservoir r;
  EXPECT_TRUE(ds);
  if (!ds) return r;
  OGRLayer* layer = ds->GetLayerByName("lakes");
  EXPECT_NE(layer, nullptr);
  if (!layer) return r;
  EXPECT_EQ(layer->GetFeatureCount(), 1);
  std::unique_ptr<OGRFeature> f(layer->GetNextFeature());
  r.id = f->GetFieldAsString("lake_id");
  r.crest_m = f->GetFieldAsDouble("crest_level_m");
  r.length_m = f->GetFieldAsDouble("weir_length_m");
  r.area_m2 = f->GetGeometryRef()->toPolygon()->get_Area();  // UTM metres: planar area in m²
  return r;
}

std::size_t indexOf(const network::NetworkPlan& plan, const std::string& id) {
  return static_cast<std::size_t>(std::find(plan.reach_id.begin(), plan.reach_id.end(), id) - plan.reach_id.begin());
}

}  // namespace

// The dam stands where R14 flows into R13 (sample-network/README.md): the
// lake takes R14 and gives its outflow to R13, nothing lies inside it.
TEST(SampleReservoir, SitsWhereR14FlowsIntoR13) {
  const auto net = run::loadNetwork(demoRequest(true).network);
  ASSERT_FALSE(net->hasErrors());
  ASSERT_TRUE(net->lakes && net->lake_plan);
  ASSERT_EQ(net->lakes->lakes.size(), 1u);
  EXPECT_EQ(net->lakes->lakes[0].lake_id, "RES1");
  const auto& links = net->lake_links.at(0);
  const auto ids = [&](const std::vector<std::uint32_t>& v) {
    std::set<std::string> out;
    for (auto r : v) out.insert(net->lake_plan->reach_id[r]);
    return out;
  };
  EXPECT_EQ(ids(links.inflow), std::set<std::string>{"R14"});
  EXPECT_EQ(ids(links.outflow), std::set<std::string>{"R13"});
  EXPECT_TRUE(links.inside.empty());
  EXPECT_EQ(net->lake_plan->size(), 41u);  // no reach dropped (sample-network/README.md: 41 reaches)
}

// The reservoir's outflow against an independent integration of
// dS/dt = I − C L (S/A)^1.5 (storage counted from the crest, the weir
// relation of docs/formats.md) by classical fourth-order Runge–Kutta with
// 10 s steps, the inflow linear between its samples, from the storage
// whose outflow equals the first inflow. A and the rule come from the file
// through OGR; C is the broad-crested value (2/3)^1.5 √g (critical depth
// over the crest, e.g. Chow 1959 §15; from memory).
TEST(SampleReservoir, MatchesAnIndependentIntegrationOfItsWeir) {
  const Reservoir res = readReservoir();
  ASSERT_GT(res.area_m2, 0);
  const run::RouteSummary s = run::route(demoRequest(true));
  const std::size_t r13 = indexOf(s.plan, "R13");
  ASSERT_LT(r13, s.plan.size());
  const run::LakeResult* res1 = s.lake("RES1");
  ASSERT_NE(res1, nullptr);
  ASSERT_EQ(res1->outflow_reaches, (std::vector<std::uint32_t>{static_cast<std::uint32_t>(r13)}));
  const auto& lake = res1->routing;
  ASSERT_TRUE(lake.routed);
  const std::vector<double>& inflow = lake.inflow_m3s;
  ASSERT_EQ(inflow.size(), s.results.axis.steps);

  const double c = std::pow(2.0 / 3.0, 1.5) * std::sqrt(9.80665), cl = c * res.length_m, a = res.area_m2;
  const auto outflow = [&](double storage) { return cl * std::pow(std::max(storage, 0.0) / a, 1.5); };
  const double dt = s.results.axis.dt_s, h = 10.0;
  const int sub = static_cast<int>(std::lround(dt / h));
  double storage = a * std::pow(inflow[0] / cl, 2.0 / 3.0);
  std::vector<double> out{outflow(storage)}, head{storage / a};
  for (std::size_t k = 0; k + 1 < inflow.size(); ++k) {
    const auto in = [&](double t) { return inflow[k] + (inflow[k + 1] - inflow[k]) * t / dt; };
    const auto f = [&](double t, double st) { return in(t) - outflow(st); };
    for (int j = 0; j < sub; ++j) {
      const double t = j * h;
      const double k1 = f(t, storage), k2 = f(t + h / 2, storage + h / 2 * k1);
      const double k3 = f(t + h / 2, storage + h / 2 * k2), k4 = f(t + h, storage + h * k3);
      storage += h / 6 * (k1 + 2 * k2 + 2 * k3 + k4);
    }
    out.push_back(outflow(storage));
    head.push_back(storage / a);
  }
  const double peak = *std::max_element(out.begin(), out.end());
  const double peak_head = *std::max_element(head.begin(), head.end());
  const auto& routed = lake.result;
  ASSERT_EQ(routed.outflow_m3s.size(), out.size());
  // 0.5 % of the peak: the project's bound for a weir lake against an
  // independent integration (the storage-indication step is second order).
  for (std::size_t k = 0; k < out.size(); ++k) {
    EXPECT_NEAR(routed.outflow_m3s[k], out[k], 0.005 * peak) << "sample " << k;
    EXPECT_NEAR(routed.level_m[k] - res.crest_m, head[k], 0.005 * peak_head) << "sample " << k;
  }
  EXPECT_NEAR(*std::max_element(routed.outflow_m3s.begin(), routed.outflow_m3s.end()), peak, 0.005 * peak);
  double worst = 0;
  for (std::size_t k = 0; k < out.size(); ++k) worst = std::max(worst, std::abs(routed.outflow_m3s[k] - out[k]));
  std::printf("RES1 against RK4: largest outflow difference %.4f %% of the peak (%.3f m3/s)\n", 100 * worst / peak, peak);
}

// The scenario's design (sample-network/README.md): the reservoir lowers
// the tributary's flood peak by 20–50 %, later; R13 below the dam peaks
// lower than without it; volume balances.
TEST(SampleReservoir, AttenuatesTheTributaryAsDesigned) {
  const run::RouteSummary with = run::route(demoRequest(true));
  const run::RouteSummary without = run::route(demoRequest(false));
  ASSERT_EQ(with.plan.reach_id, without.plan.reach_id);  // the lake sits on a node: no reach dropped
  const auto lakes = run::routedLakes(*with.network, with.plan, with.lakes);
  ASSERT_EQ(lakes.size(), 1u);
  EXPECT_EQ(lakes[0].lake->lake_id, "RES1");
  EXPECT_EQ(lakes[0].outflow_reach, "R13");
  const auto& r = lakes[0].routing->result;
  const auto& in = lakes[0].routing->inflow_m3s;
  const auto in_peak = std::max_element(in.begin(), in.end());
  const auto out_peak = std::max_element(r.outflow_m3s.begin(), r.outflow_m3s.end());
  const double attenuation = 100 * (1 - *out_peak / *in_peak);
  EXPECT_GE(attenuation, 20.0);
  EXPECT_LE(attenuation, 50.0);
  EXPECT_GT(out_peak - r.outflow_m3s.begin(), in_peak - in.begin()) << "the outflow peaks later";
  // The lake's inflow is R14's outflow (the reservoir takes R14 alone).
  const std::size_t r14 = indexOf(with.plan, "R14"), r13 = indexOf(with.plan, "R13");
  EXPECT_GE(with.results.reaches[r14].peak_q_m3s, *in_peak * (1 - 1e-12));
  EXPECT_LT(with.results.reaches[r13].peak_q_m3s, without.results.reaches[r13].peak_q_m3s);
  // Level-pool continuity holds to round-off (docs/methods.md); the
  // network's balance within the 1 % the project holds `vpmc` to.
  EXPECT_LT(std::abs(r.volume_error_m3), 1e-9 * r.volume_in_m3);
  EXPECT_LT(std::abs(with.results.volume.error_pct), 1.0);
  std::printf("RES1: inflow peak %.3f, outflow peak %.3f m3/s (%.1f %%); R13 peak %.3f -> %.3f, R1 peak %.3f -> %.3f m3/s\n",
              *in_peak, *out_peak, attenuation, without.results.reaches[r13].peak_q_m3s,
              with.results.reaches[r13].peak_q_m3s, without.results.reaches[indexOf(with.plan, "R1")].peak_q_m3s,
              with.results.reaches[indexOf(with.plan, "R1")].peak_q_m3s);
}
