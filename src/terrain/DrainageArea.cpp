#include "reachwise/terrain/DrainageArea.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachProblem.hpp"

namespace reachwise::terrain {

namespace {

using network::ReachGraph;
using Vertex = ReachGraph::Vertex;

/// International mile, exact by definition (1 mi = 1609.344 m).
constexpr double kMetresPerMile = 1609.344;
/// 1 mi² = 1609.344² m² = 2 589 988.110336 m² = 2.589988110336 km².
constexpr double kKm2PerSquareMile = kMetresPerMile * kMetresPerMile / 1e6;

/// A field or raster value smaller than the upstream sum by more than this
/// share of the sum is reported (rounded areas in a field stay quiet).
constexpr double kBelowUpstreamTolerance = 1e-3;

std::vector<Vertex> orderOrThrow(const ReachGraph& graph) {
  auto order = graph.topologicalOrder();
  if (!order) {
    InputLocation where;
    where.file = graph.table().source;
    where.layer = graph.table().layer;
    throw InputError(where, "the network has a cycle: drainage areas cannot be accumulated "
                            "(run `reachwise check` for the reaches involved)");
  }
  return std::move(*order);
}

/// Share of `from`'s outflow entering `to`: the resolved split at a
/// bifurcation, equal shares where it is unresolved, else 1.
double shareInto(const ReachGraph& graph, Vertex from, Vertex to) {
  const double f = graph.fraction(from, to);
  if (std::isfinite(f)) return f;
  return 1.0 / static_cast<double>(std::max<std::size_t>(1, graph.downstreamCount(from)));
}

}  // namespace

std::string_view areaSourceName(AreaSource source) noexcept {
  switch (source) {
    case AreaSource::Field: return "field";
    case AreaSource::Raster: return "raster";
    case AreaSource::LengthRelation: return "length_relation";
    case AreaSource::UpstreamSum: return "upstream_sum";
    case AreaSource::None: return "none";
  }
  return "none";
}

std::string_view rasterUnitName(RasterUnit unit) noexcept {
  switch (unit) {
    case RasterUnit::Cells: return "cells";
    case RasterUnit::SquareMetres: return "m2";
    case RasterUnit::SquareKilometres: return "km2";
  }
  return "cells";
}

double LengthRelation::areaKm2(double length_m) const {
  // Hack (1957): L = c A^h, L in miles, A in square miles. Inverted:
  //   A [mi²] = (L [mi] / c)^(1/h),  L [mi] = L [m] / 1609.344,
  //   A [km²] = A [mi²] × 2.589988110336.
  if (!(length_m >= 0) || !std::isfinite(length_m)) return std::numeric_limits<double>::quiet_NaN();
  const double length_mi = length_m / kMetresPerMile;
  const double area_mi2 = std::pow(length_mi / coefficient, 1.0 / exponent);
  return area_mi2 * kKm2PerSquareMile;
}

std::vector<double> longestFlowPathM(const ReachGraph& graph) {
  const auto order = orderOrThrow(graph);
  std::vector<double> path(graph.size(), 0.0);
  for (const Vertex v : order) {
    double above = 0.0;
    for (const Vertex u : graph.upstream(v)) above = std::max(above, path[u]);
    path[v] = above + graph.lengthM(v);
  }
  return path;
}

std::vector<AreaValue> accumulateArea(const ReachGraph& graph, const AreaOptions& options,
                                      const std::vector<double>& raster_km2,
                                      network::ProblemList& problems) {
  const std::size_t n = graph.size();
  if (!options.field_km2.empty() && options.field_km2.size() != n)
    throw InvalidParameter("field_km2", fmt::format("expected {} values (one per reach), got {}", n,
                                                    options.field_km2.size()));
  if (!raster_km2.empty() && raster_km2.size() != n)
    throw InvalidParameter("raster_km2", fmt::format("expected {} values (one per reach), got {}", n,
                                                     raster_km2.size()));
  for (Vertex v = 0; v < static_cast<Vertex>(options.field_km2.size()); ++v)
    if (options.field_km2[v] < 0) {
      InputLocation where;
      where.file = graph.table().source;
      where.layer = graph.table().layer;
      where.fid = graph.record(v).fid;
      where.reach_id = graph.id(v);
      where.field = options.field_name;
      throw InputError(where, fmt::format("drainage area {} is negative", options.field_km2[v]));
    }
  const auto order = orderOrThrow(graph);
  const std::vector<double> path_m = longestFlowPathM(graph);

  // Share of the basin's flow each reach carries (1 below a headwater,
  // times the branch's share below a bifurcation, at most 1 below a
  // confluence): Hack's law gives the whole basin's area, so a branch of a
  // bifurcation takes its share of it.
  std::vector<double> carried(n, 1.0);
  for (const Vertex v : order) {
    const auto up = graph.upstream(v);
    if (up.empty()) continue;
    double c = 0.0;
    for (const Vertex u : up) c += carried[u] * shareInto(graph, u, v);
    carried[v] = std::min(1.0, c);
  }

  std::vector<AreaValue> out(n);
  for (const Vertex v : order) {
    AreaValue& a = out[v];
    if (!options.field_km2.empty() && std::isfinite(options.field_km2[v])) {
      a.own_km2 = options.field_km2[v];
      a.own_source = AreaSource::Field;
    } else if (!raster_km2.empty() && std::isfinite(raster_km2[v])) {
      a.own_km2 = raster_km2[v];
      a.own_source = AreaSource::Raster;
    } else {
      a.own_km2 = carried[v] * options.length_relation.areaKm2(path_m[v]);
      a.own_source = std::isfinite(a.own_km2) ? AreaSource::LengthRelation : AreaSource::None;
    }

    const auto up = graph.upstream(v);
    double sum = 0.0;
    for (const Vertex u : up)
      if (std::isfinite(out[u].km2)) sum += out[u].km2 * shareInto(graph, u, v);

    if (a.own_source != AreaSource::None && (up.empty() || a.own_km2 >= sum)) {
      a.km2 = a.own_km2;
      a.source = a.own_source;
      continue;
    }
    if (up.empty()) continue;  // no estimate at all: stays NaN / None
    a.km2 = sum;
    a.source = AreaSource::UpstreamSum;
    const bool given = a.own_source == AreaSource::Field || a.own_source == AreaSource::Raster;
    if (given && sum - a.own_km2 > kBelowUpstreamTolerance * sum) {
      const network::Point2 end = graph.bottom(v);
      const std::string what =
          a.own_source == AreaSource::Field
              ? (options.field_name.empty() ? std::string("the area field")
                                            : "field " + options.field_name)
              : std::string("the area raster");
      problems.push_back(network::reachProblem(
          network::ProblemCode::AreaBelowUpstream, graph.record(v), end.x, end.y,
          fmt::format("drainage area {:.6g} km² from {} is smaller than the {:.6g} km² flowing "
                      "in from upstream; the upstream sum is used",
                      a.own_km2, what, sum)));
    }
  }
  return out;
}

std::vector<AreaValue> drainageArea(const ReachGraph& graph, const AreaOptions& options,
                                    network::ProblemList& problems) {
  std::vector<double> raster;
  if (options.raster) raster = sampleAreaRaster(graph, *options.raster);
  return accumulateArea(graph, options, raster, problems);
}

}  // namespace reachwise::terrain
