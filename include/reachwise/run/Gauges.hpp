#pragma once
/// \file
/// Gauges bound to a run: observed hydrographs on the run's axis, each at
/// the reach whose outflow it is compared with, and a sink that keeps the
/// simulated outflow of those reaches while the network routes.

#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "reachwise/gauges/Skill.hpp"
#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::run {

struct LoadedNetwork;

/// Where observations come from (docs/formats.md, "Observed hydrographs"
/// and "Gauges").
struct GaugeFiles {
  std::string observed;      ///< CSV of observed discharge; empty: no gauges
  /// A point layer of gauges (`gauge_id`, optional `reach_id`); empty: the
  /// observed series are keyed by reach id, one gauge per series.
  std::string gauges;
  std::string gauges_layer;  ///< empty: the only point layer
  double snap_m = 100;       ///< how far a gauge may lie from its reach, metres
};

struct Gauge {
  std::string gauge_id;       ///< the reach id when there is no gauge layer
  std::string reach_id;
  std::uint32_t reach = 0;    ///< plan index of the reach compared
  /// Metres the gauge was moved onto the reach; NaN when the reach was
  /// named (by the layer's reach_id, or by the observed file's key).
  double snap_distance_m = std::numeric_limits<double>::quiet_NaN();
  std::optional<network::Point2> point;  ///< the gauge as given (layer); else none
  std::vector<std::string> tied;         ///< other reaches as near (GaugePlace::tied)
  std::vector<double> observed;          ///< on the run's axis, m^3/s; NaN: none
};

struct BoundGauges {
  std::vector<Gauge> gauges;             ///< gauge layer order, else by id
  std::vector<std::string> warnings;     ///< one line each
};

/// Reads the observations (in the network's `unit`) and the gauge layer
/// and binds them to `plan`. Throws InputError naming the file for an
/// observed series whose key is no gauge (no reach without a layer),
/// listing every such key, and as io::readGauges / io::placeGauges.
/// A gauge without an observed series, or whose series has no value
/// within the run, is kept (it scores nothing) and warned about.
BoundGauges bindGauges(const GaugeFiles& files, const LoadedNetwork& net, const network::NetworkPlan& plan,
                       const routing::TimeAxis& axis, units::System unit);

/// Keeps the outflow series of chosen reaches as the router hands them
/// over (thread-safe: every reach writes its own slot).
class OutflowCapture final : public routing::SeriesSink {
public:
  OutflowCapture(std::size_t plan_size, const std::vector<std::uint32_t>& reaches);
  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override;
  bool wants(std::uint32_t reach) const override { return reach < slot_.size() && slot_[reach] >= 0; }
  /// The captured outflow of `reach` (empty before it was routed).
  const std::vector<double>& outflow(std::uint32_t reach) const;

private:
  std::vector<long> slot_;                  // plan index -> series slot, -1: not kept
  std::vector<std::vector<double>> series_;
};

/// Each gauge's skill (gauges::skill) against the captured outflow.
std::vector<gauges::SkillScores> scoreGauges(const std::vector<Gauge>& gauges, const OutflowCapture& capture,
                                             const routing::TimeAxis& axis);

}  // namespace reachwise::run
