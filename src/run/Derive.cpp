#include "reachwise/run/Derive.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/io/PrepareConfig.hpp"
#include "reachwise/io/ReachValues.hpp"
#include "reachwise/network/ReachProblem.hpp"
#include "reachwise/run/Network.hpp"
#include "reachwise/terrain/Dem.hpp"
#include "reachwise/terrain/DrainageArea.hpp"
#include "reachwise/terrain/HydraulicGeometry.hpp"

namespace reachwise::run {

namespace {

struct Channels {
  std::vector<terrain::AreaValue> areas;
  std::vector<terrain::DerivedSection> sections;
};

/// Drainage area and hydraulic geometry of every reach ([prepare] keys).
Channels channelSections(const network::ReachGraph& graph, const io::PrepareConfig& config,
                         network::ProblemList& problems) {
  const auto& table = graph.table();
  std::vector<double> field_km2;
  if (!config.area_field.empty()) field_km2 = io::readReachNumbers(table, config.area_field, true);
  Channels c;
  c.areas = terrain::drainageArea(graph, config.areaOptions(std::move(field_km2)), problems);
  terrain::HydraulicGeometryOptions geometry = config.geometry;
  if (!config.class_field.empty()) geometry.class_values = io::readReachTexts(table, config.class_field);
  c.sections = terrain::hydraulicGeometry(graph, c.areas, geometry);
  return c;
}

void describeSection(const terrain::AreaValue& area, const terrain::DerivedSection& d, io::PreparedReach& p,
                     DerivationSummary& s) {
  p.section = d.section;
  p.drainage_area_km2 = d.area_km2;
  if (area.source != terrain::AreaSource::None) p.area_source = terrain::areaSourceName(area.source);
  auto name = [](terrain::AttributeSource a) {
    return a == terrain::AttributeSource::None ? std::string() : std::string(terrain::attributeSourceName(a));
  };
  p.bottom_width_source = name(d.bottom_width);
  p.side_slope_source = name(d.side_slope);
  p.manning_n_source = name(d.manning_n);
  p.bank_depth_source = name(d.bank_depth);
  s.width_from_geometry += d.bottom_width == terrain::AttributeSource::HydraulicGeometry;
  s.width_from_field += d.bottom_width == terrain::AttributeSource::Field;
  const double w = d.section.bottom_width_m;
  if (std::isfinite(w)) {
    s.min_width_m = std::isnan(s.min_width_m) ? w : std::min(s.min_width_m, w);
    s.max_width_m = std::isnan(s.max_width_m) ? w : std::max(s.max_width_m, w);
    auto [it, fresh] = s.width_by_order.try_emplace(d.strahler_order, w, w);
    it->second = {std::min(it->second.first, w), std::max(it->second.second, w)};
  }
}

}  // namespace

Derivation deriveAttributes(LoadedNetwork& net, const std::string& dem_path, const io::PrepareConfig& config) {
  const terrain::Dem dem(dem_path);
  const network::ReachGraph& graph = *net.graph;
  terrain::SlopeOptions options;
  options.min_slope = config.min_slope;
  options.rise_threshold_m = config.rise_threshold_m;
  options.spacing_m = config.sample_spacing_m;
  const auto slopes = terrain::bedSlopes(graph, dem, options, net.problems);
  const Channels channels = channelSections(graph, config, net.problems);

  const auto& default_slope = net.config.field("slope").default_number;
  const bool replace_slope = config.replaces("slope"), replace_elevations = config.replaces("elevations");
  Derivation out;
  out.reaches.resize(graph.size());
  DerivationSummary& s = out.summary;
  for (network::ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const auto& r = graph.record(v);
    const terrain::ReachSlope& d = slopes[v];
    io::PreparedReach& p = out.reaches[v];
    p.dem_raw_slope = d.raw_slope;
    p.dem_samples = d.samples;
    p.dem_valid_samples = d.valid_samples;
    p.dem_flags = terrain::flagNames(d.flags);
    if (std::isfinite(r.section.bed_slope) && !replace_slope) {
      p.slope = r.section.bed_slope;
      p.slope_source = "field";
      ++s.slope_from_field;
    } else if (std::isfinite(d.slope)) {
      p.slope = d.slope;
      p.slope_source = "dem";
      ++s.slope_from_dem;
      s.floored += (d.flags & terrain::kFloored) != 0;
    } else if (default_slope) {
      p.slope = *default_slope;
      p.slope_source = "default";
      ++s.slope_from_default;
    } else {
      ++s.slope_missing;
      net.problems.push_back(network::reachProblem(
          network::ProblemCode::MissingAttribute, r,
          "no bed slope: the slope field is empty, the DEM gives none and the run file has no "
          "slope default"));
    }
    s.interpolated += (d.flags & terrain::kInterpolated) != 0;
    s.with_nodata += d.valid_samples < d.samples;
    if (std::isfinite(r.up_elevation_m) && std::isfinite(r.down_elevation_m) && !replace_elevations) {
      p.up_elevation_m = r.up_elevation_m;
      p.down_elevation_m = r.down_elevation_m;
      p.elevation_source = "field";
    } else if (std::isfinite(d.up_elevation_m)) {
      p.up_elevation_m = d.up_elevation_m;
      p.down_elevation_m = d.down_elevation_m;
      p.elevation_source = "dem";
    }
    describeSection(channels.areas[v], channels.sections[v], p, s);
    if (std::isfinite(p.slope)) {
      s.min_slope = std::isnan(s.min_slope) ? p.slope : std::min(s.min_slope, p.slope);
      s.max_slope = std::isnan(s.max_slope) ? p.slope : std::max(s.max_slope, p.slope);
    }
  }
  // The values derived become the network's; the graph is rebuilt on them
  // (its bifurcation shares by width read the derived widths).
  for (network::ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    network::ReachRecord& r = net.table.reaches[v];
    const io::PreparedReach& p = out.reaches[v];
    r.section = p.section;
    r.section.bed_slope = p.slope;
    r.up_elevation_m = p.up_elevation_m;
    r.down_elevation_m = p.down_elevation_m;
  }
  net.graph.emplace(net.table, net.config.splits);
  return out;
}

}  // namespace reachwise::run
