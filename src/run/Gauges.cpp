#include "reachwise/run/Gauges.hpp"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "reachwise/io/GaugeReader.hpp"
#include "reachwise/io/Observed.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::run {

BoundGauges bindGauges(const GaugeFiles& files, const LoadedNetwork& net, const network::NetworkPlan& plan,
                       const routing::TimeAxis& axis, units::System unit) {
  BoundGauges out;
  if (files.observed.empty()) return out;
  requireExisting(files.observed);
  io::Observations obs = io::readObservations(files.observed, axis, unit);
  out.warnings = std::move(obs.warnings);

  std::map<std::string, std::uint32_t, std::less<>> reach_index;
  for (std::size_t i = 0; i < plan.size(); ++i) reach_index.emplace(plan.reach_id[i], static_cast<std::uint32_t>(i));

  if (!files.gauges.empty()) {
    requireExisting(files.gauges);
    io::GaugeReadOptions options;
    options.layer = files.gauges_layer;
    options.network_crs_wkt = net.table.crs_wkt;
    options.length_unit_m = net.config.length_unit_m;
    const io::GaugeTable table = io::readGauges(files.gauges, options);
    const auto places = io::placeGauges(table, net.table, plan, files.snap_m);
    for (std::size_t g = 0; g < table.gauges.size(); ++g) {
      Gauge gauge;
      gauge.gauge_id = table.gauges[g].gauge_id;
      gauge.reach_id = places[g].reach_id;
      gauge.reach = reach_index.at(gauge.reach_id);
      gauge.snap_distance_m = places[g].snap_distance_m;
      gauge.point = table.gauges[g].at;
      gauge.tied = places[g].tied;
      if (!gauge.tied.empty())
        out.warnings.push_back(fmt::format("gauge {} lies on a node, equally near reaches {} and {}; it is compared "
                                           "with {} (give its reach_id to choose)",
                                           gauge.gauge_id, gauge.reach_id, fmt::join(gauge.tied, ", "),
                                           gauge.reach_id));
      out.gauges.push_back(std::move(gauge));
    }
  } else {
    for (const auto& [id, values] : obs.values) {
      const auto it = reach_index.find(id);
      if (it == reach_index.end()) continue;  // listed below
      Gauge gauge;
      gauge.gauge_id = gauge.reach_id = id;
      gauge.reach = it->second;
      out.gauges.push_back(std::move(gauge));
    }
  }

  std::set<std::string, std::less<>> known;
  for (const auto& g : out.gauges) known.insert(g.gauge_id);
  std::vector<std::string> unknown;
  for (const auto& [id, values] : obs.values)
    if (!known.count(id)) unknown.push_back(id);
  if (!unknown.empty()) {
    InputLocation at;
    at.file = files.observed;
    throw InputError(at, fmt::format("observed series for {} {} that {} no {}: {}", unknown.size(),
                                     unknown.size() == 1 ? "id" : "ids", unknown.size() == 1 ? "is" : "are",
                                     files.gauges.empty() ? "reach of the network" : "gauge of " + files.gauges,
                                     fmt::join(unknown, ", ")));
  }
  for (auto& g : out.gauges) {
    auto it = obs.values.find(g.gauge_id);
    if (it == obs.values.end()) {
      out.warnings.push_back(fmt::format("gauge {} has no observed series in {}", g.gauge_id, files.observed));
      g.observed.assign(axis.steps, std::nan(""));
    } else {
      g.observed = std::move(it->second);
    }
  }
  return out;
}

OutflowCapture::OutflowCapture(std::size_t plan_size, const std::vector<std::uint32_t>& reaches)
    : slot_(plan_size, -1) {
  for (const auto r : reaches)
    if (r < plan_size && slot_[r] < 0) {
      slot_[r] = static_cast<long>(series_.size());
      series_.emplace_back();
    }
}

void OutflowCapture::write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double>,
                           std::span<const double>) {
  if (!wants(reach)) return;
  auto& s = series_[static_cast<std::size_t>(slot_[reach])];
  s.assign(q_m3s.begin(), q_m3s.end());
}

const std::vector<double>& OutflowCapture::outflow(std::uint32_t reach) const {
  static const std::vector<double> none;
  return wants(reach) ? series_[static_cast<std::size_t>(slot_[reach])] : none;
}

std::vector<gauges::SkillScores> scoreGauges(const std::vector<Gauge>& gauges, const OutflowCapture& capture,
                                             const routing::TimeAxis& axis) {
  std::vector<gauges::SkillScores> scores;
  scores.reserve(gauges.size());
  for (const auto& g : gauges) {
    const auto& sim = capture.outflow(g.reach);
    if (sim.size() != g.observed.size()) {
      scores.push_back(gauges::skill(g.observed, std::vector<double>(g.observed.size(), std::nan("")), axis.dt_s));
      continue;
    }
    scores.push_back(gauges::skill(g.observed, sim, axis.dt_s));
  }
  return scores;
}

}  // namespace reachwise::run
