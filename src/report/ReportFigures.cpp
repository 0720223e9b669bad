// From results to figures: the map, the outlet and confluence hydrographs
// and the confluence timing chart, each written into the report folder.
#include <GeographicLib/Geodesic.hpp>
#include <fmt/format.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>

#include "Figures.hpp"
#include "ReportModel.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::report::detail {

namespace {

/// Scale-bar facts of the layer's CRS: metres per x unit, the unit's name,
/// the x stretch of a geographic CRS (cos latitude).
void crsScale(const network::ReachTable& table, double mid_lat, MapFigure& map) {
  map.crs_unit = "CRS units";
  if (table.crs_wkt.empty()) return;
  OGRSpatialReference srs;
  srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  if (srs.importFromWkt(table.crs_wkt.c_str()) != OGRERR_NONE) return;
  if (srs.IsGeographic()) {
    // One degree of longitude along the map's middle latitude, on the
    // WGS 84 ellipsoid (GeographicLib, Karney 2013): close enough for a bar.
    const double lat = std::clamp(mid_lat, -89.0, 89.0);
    double s12 = NAN;
    GeographicLib::Geodesic::WGS84().Inverse(lat, 0.0, lat, 1.0, s12);
    map.metres_per_unit_x = s12;
    map.aspect_x = std::max(0.05, std::cos(lat * M_PI / 180.0));
    map.crs_unit = "degrees";
    return;
  }
  const char* unit = nullptr;
  const double metres = srs.GetLinearUnits(&unit);
  if (metres > 0) map.metres_per_unit_x = metres;
  if (unit) map.crs_unit = unit;
}

MapFigure mapFigure(const ReportInputs& in, const ReportModel& m) {
  MapFigure map;
  map.title = fmt::format("Peak discharge along the network ({})", m.units.q_unit());
  map.value_label = fmt::format("peak discharge ({})", m.units.q_unit());
  map.feet = m.units.us;
  const auto& plan = in.plan;
  double ymin = INFINITY, ymax = -INFINITY;
  map.lines.reserve(plan.size());
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const auto& pts = in.table.reaches[plan.record[i]].line;
    for (const auto& p : pts) ymin = std::min(ymin, p.y), ymax = std::max(ymax, p.y);
    map.lines.push_back({&pts, m.units.q(in.results.reaches[i].peak_q_m3s)});
  }
  crsScale(in.table, std::isfinite(ymin) ? (ymin + ymax) / 2 : 0.0, map);

  // Every confluence, bifurcation and outlet while they stay legible; on
  // very large networks only those the report draws hydrographs for.
  // Labels (outlets and the confluences with hydrographs) are placed by
  // peak discharge, largest first; a label with no free place is left out
  // and the page's tables say which are on the map.
  constexpr std::size_t kMaxMarkers = 5000;
  std::vector<bool> major(in.results.nodes.size(), false);
  for (const std::size_t k : m.hydrograph_confluences) major[k] = true;
  std::vector<bool> shown_outlet(plan.size(), false);
  for (const std::uint32_t o : m.hydrograph_outlets) shown_outlet[o] = true;
  const bool all_confluences = m.confluence_count <= kMaxMarkers;
  const bool all_bifurcations = m.bifurcation_count <= kMaxMarkers;
  const bool all_outlets = m.outlet_count <= kMaxMarkers;
  const bool label_all_outlets = m.outlet_count <= kLabelAllOutlets;
  const auto priority = [](double q) { return std::isfinite(q) ? q : -INFINITY; };
  for (std::size_t k = 0; k < in.results.nodes.size(); ++k) {
    const auto& n = in.results.nodes[k];
    if (!std::isfinite(n.x) || !std::isfinite(n.y)) continue;
    if (n.kind == routing::NodeKind::Confluence && (major[k] || all_confluences))
      map.markers.push_back({n.x, n.y, major[k] ? MapMarker::Kind::MajorConfluence : MapMarker::Kind::Confluence,
                             major[k] ? n.node_id : std::string(), priority(m.units.q(n.peak_q_m3s))});
    if (n.kind == routing::NodeKind::Bifurcation && all_bifurcations)
      map.markers.push_back({n.x, n.y, MapMarker::Kind::Bifurcation, std::string(), 0});
  }
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    if (!plan.isOutlet(i) || !(shown_outlet[i] || all_outlets)) continue;
    const bool label = shown_outlet[i] || label_all_outlets;
    map.markers.push_back({plan.bottom[i].x, plan.bottom[i].y, MapMarker::Kind::Outlet,
                           label ? "O:" + plan.reach_id[i] : std::string(),
                           priority(m.units.q(in.results.reaches[i].peak_q_m3s))});
  }
  // Every lake's outline; labels by priority (the largest inflow first),
  // all of them while they stay legible, else those with a panel.
  for (std::size_t k = 0; k < m.shown_lakes.size(); ++k) {
    const auto* lake = in.lakes[m.shown_lakes[k]].lake;
    const bool label = in.lakes.size() <= kLabelAllLakes || k < kShownLakes;
    map.lakes.push_back({&lake->rings, label ? lake->lake_id : std::string()});
  }
  // Every gauge; labels by priority (the worst KGE first), all of them
  // while they stay legible, else those with a panel.
  for (std::size_t k = 0; k < m.shown_gauges.size(); ++k) {
    const io::GaugeOutput& g = in.gauges[m.shown_gauges[k]];
    if (!std::isfinite(g.x) || !std::isfinite(g.y)) continue;
    const bool label = in.gauges.size() <= kLabelAllGauges || k < kShownGauges;
    map.gauges.push_back({g.x, g.y, label ? g.gauge_id : std::string()});
  }
  return map;
}

std::vector<double> scaled(std::span<const double> q, const DisplayUnits& u, double fraction = 1.0) {
  std::vector<double> out(q.size());
  for (std::size_t k = 0; k < q.size(); ++k) out[k] = u.q(q[k] * fraction);
  return out;
}

HydrographFigure emptyFigure(const ReportInputs& in, const ReportModel& m, std::string title) {
  HydrographFigure fig;
  fig.title = std::move(title);
  fig.start_unix_s = in.results.axis.start_unix_s;
  fig.dt_s = in.results.axis.dt_s;
  fig.steps = in.results.axis.steps;
  fig.utc_offset_min = m.utc_offset_min;
  fig.q_unit = m.units.q_unit();
  return fig;
}

/// A reach's outflow, its peak, and its inflow's peak; `title` names it.
HydrographFigure reachFigure(const ReportInputs& in, const ReportSeries& series, const ReportModel& m,
                             std::uint32_t reach, const std::string& title) {
  const auto& s = in.results.reaches[reach];
  HydrographFigure fig = emptyFigure(in, m, title);
  Curve c;
  c.label = "outflow of " + in.plan.reach_id[reach];
  c.q = scaled(series.series(reach), m.units);
  c.peak_q = m.units.q(s.peak_q_m3s);
  c.peak_t = s.peak_time_s;
  c.colour = {0.08, 0.11, 0.35};
  c.line_width = 2.2;
  fig.curves.push_back(std::move(c));
  if (std::isfinite(s.inflow_peak_m3s)) {
    // The reach's own inflow shows how much the last reach attenuated.
    Curve note;
    note.label = "inflow peak of " + in.plan.reach_id[reach];
    note.peak_q = m.units.q(s.inflow_peak_m3s);
    note.peak_t = s.inflow_peak_time_s;
    note.colour = {0.55, 0.55, 0.55};
    fig.curves.push_back(std::move(note));
  }
  return fig;
}

HydrographFigure confluenceFigure(const ReportInputs& in, const ReportSeries& series, const ReportModel& m,
                                  const routing::NodeSummary& node, std::uint32_t leaving) {
  const auto& plan = in.plan;
  HydrographFigure fig =
      emptyFigure(in, m, fmt::format("Confluence {}: combined peak {:.2f} {}", node.node_id,
                                     m.units.q(node.peak_q_m3s), m.units.q_unit()));
  std::vector<double> combined(in.results.axis.steps, 0.0);
  bool complete = true;
  std::size_t k = 0;
  for (std::uint32_t e = plan.up_offset[leaving]; e < plan.up_offset[leaving + 1]; ++e, ++k) {
    const std::uint32_t u = plan.up_reach[e];
    const double share = plan.up_fraction[e];
    Curve c;
    c.label = share < 1 ? fmt::format("{} ({:.0f} % share)", plan.reach_id[u], 100 * share) : plan.reach_id[u];
    c.q = scaled(series.series(u), m.units, share);
    if (c.q.size() != combined.size()) complete = false;
    for (std::size_t j = 0; j < std::min(c.q.size(), combined.size()); ++j) combined[j] += c.q[j];
    const auto* b = std::find_if(node.branches.data(), node.branches.data() + node.branches.size(),
                                 [&](const routing::ConfluenceBranch& x) { return x.reach == u; });
    if (b != node.branches.data() + node.branches.size()) {
      c.peak_q = m.units.q(b->peak_q_m3s);
      c.peak_t = b->peak_time_s;
    }
    c.colour = seriesColour(k + 1);
    c.line_width = 1.8;
    fig.curves.push_back(std::move(c));
  }
  Curve sum;
  sum.label = "combined (sum of branches)";
  if (complete) sum.q = std::move(combined);
  sum.peak_q = m.units.q(node.peak_q_m3s);
  sum.peak_t = node.peak_time_s;
  sum.colour = {0.1, 0.1, 0.1};
  sum.line_width = 2.6;
  fig.curves.insert(fig.curves.begin(), std::move(sum));
  const auto& out = in.results.reaches[leaving];
  Curve below;
  below.label = "outflow of " + plan.reach_id[leaving] + " (downstream end)";
  below.q = scaled(series.series(leaving), m.units);
  below.peak_q = m.units.q(out.peak_q_m3s);
  below.peak_t = out.peak_time_s;
  below.colour = {0.45, 0.45, 0.45};
  below.line_width = 1.5;
  below.dashed = true;
  fig.curves.push_back(std::move(below));
  return fig;
}

/// Plan index of the reach leaving confluence node `node_id` ("N:<id>").
std::uint32_t leavingReach(const ReportSeries& series, const std::string& node_id) {
  for (const std::uint32_t c : series.confluences())
    if ("N:" + series.plan().reach_id[c] == node_id) return c;
  throw InternalError("report: confluence " + node_id + " has no captured leaving reach");
}

TimingFigure timingFigure(const ReportInputs& in, const ReportModel& m) {
  TimingFigure fig;
  fig.utc_offset_min = m.utc_offset_min;
  fig.q_unit = m.units.q_unit();
  fig.coincidence_s = kCoincidenceS;
  for (const std::size_t k : m.timing_confluences) {
    const auto& n = in.results.nodes[k];
    TimingRow row;
    row.label = n.node_id;
    row.combined_peak_t = n.peak_time_s;
    row.combined_peak_q = m.units.q(n.peak_q_m3s);
    row.spread_s = n.branch_spread_s;
    for (const auto& b : n.branches)
      row.branches.push_back({in.plan.reach_id[b.reach], b.peak_time_s, m.units.q(b.peak_q_m3s)});
    fig.rows.push_back(std::move(row));
  }
  return fig;
}

LakeFigure lakeFigure(const ReportInputs& in, const ReportModel& m, std::size_t l) {
  const io::LakeOutput& lake = in.lakes[l];
  const LakeFacts& f = m.lake_facts[l];
  const DisplayUnits& u = m.units;
  LakeFigure fig;
  fig.title = lake.outflow_reach.empty()
                  ? fmt::format("Lake {} (terminal: no reach leaves it)", lake.lake->lake_id)
                  : fmt::format("Lake {}: outflow into reach {}", lake.lake->lake_id, lake.outflow_reach);
  fig.inflow = scaled(lake.routing->inflow_m3s, u);
  fig.outflow = scaled(lake.routing->result.outflow_m3s, u);
  for (const double h : lake.routing->result.level_m) fig.level.push_back(u.len(h));
  fig.inflow_peak = u.q(f.inflow_peak_m3s);
  fig.inflow_peak_t = f.inflow_peak_t;
  fig.outflow_peak = u.q(f.outflow_peak_m3s);
  fig.outflow_peak_t = f.outflow_peak_t;
  fig.level_peak = u.len(f.peak_level_m);
  fig.level_peak_t = f.peak_level_t;
  if (lake.lake->rule.kind == routing::OutflowRule::Kind::Weir) fig.crest_level = u.len(lake.lake->rule.crest_level_m);
  fig.start_unix_s = in.results.axis.start_unix_s;
  fig.dt_s = in.results.axis.dt_s;
  fig.steps = in.results.axis.steps;
  fig.utc_offset_min = m.utc_offset_min;
  fig.q_unit = u.q_unit();
  fig.len_unit = u.len_unit();
  return fig;
}

/// "KGE 0.87" with two decimals, "KGE –" when it cannot be formed.
std::string score(const char* name, double v) {
  return std::isfinite(v) ? fmt::format("{} {:.2f}", name, v) : fmt::format("{} -", name);
}

GaugeFigure gaugeFigure(const ReportInputs& in, const ReportModel& m, std::size_t gi) {
  const io::GaugeOutput& g = in.gauges[gi];
  GaugeFigure fig;
  fig.title = fmt::format("Gauge {} on reach {}: {}, {}", g.gauge_id, g.reach_id, score("KGE", g.skill.kge),
                          score("NSE", g.skill.nse));
  fig.observed = scaled(*g.observed, m.units);
  fig.simulated = scaled(*g.simulated, m.units);
  fig.observed_label = fmt::format("observed ({} samples compared)", g.skill.n_obs);
  fig.simulated_label = "simulated outflow of reach " + g.reach_id;
  if (const CalibrationComparison* c = in.calibration) {
    const auto it = std::find(c->gauge_ids.begin(), c->gauge_ids.end(), g.gauge_id);
    if (it != c->gauge_ids.end()) {
      const auto k = static_cast<std::size_t>(it - c->gauge_ids.begin());
      fig.earlier = scaled(c->outflow_before[k], m.units);
      fig.simulated_label += " (calibrated)";
      fig.earlier_label = "simulated before calibration (" + score("KGE", c->before[k].kge) + ")";
    }
  }
  fig.start_unix_s = in.results.axis.start_unix_s;
  fig.dt_s = in.results.axis.dt_s;
  fig.steps = in.results.axis.steps;
  fig.utc_offset_min = m.utc_offset_min;
  fig.q_unit = m.units.q_unit();
  return fig;
}

}  // namespace

void drawFigures(const std::filesystem::path& folder, const ReportInputs& in, const ReportSeries& series,
                 ReportModel& m) {
  const bool png = in.plan.size() > in.svg_map_max_reaches;
  const std::string q_unit = m.units.q_unit(), when = "time in " + offsetName(m.utc_offset_min);
  m.map.file = png ? "map.png" : "map.svg";
  m.map.caption = "Peak discharge along the network";
  m.map.note = fmt::format(
      "Reaches coloured and widened by peak discharge ({}); outlets as squares, confluences as circles{}{}{}. "
      "Labels are placed by peak discharge, largest first, where they cover no symbol and no other label; the "
      "tables list every outlet and major confluence and say which the map labels. Node labels are the ids of "
      "the GeoPackage's nodes layer.",
      q_unit, m.bifurcation_count ? ", bifurcations as diamonds" : "",
      in.lakes.empty() ? "" : "; lakes and reservoirs in light blue (a dot where too small to see), labelled with "
                              "their ids",
      in.gauges.empty() ? "" : "; gauges as triangles, labelled with their ids");
  const MapDrawn drawn = drawMap(folder / m.map.file, mapFigure(in, m), png ? ImageFormat::Png : ImageFormat::Svg);
  m.map.width_px = drawn.width;
  m.map.height_px = drawn.height;
  m.map_labels.insert(drawn.labels.begin(), drawn.labels.end());

  for (std::size_t k = 0; k < m.hydrograph_outlets.size(); ++k) {
    const std::uint32_t o = m.hydrograph_outlets[k];
    if (!series.has(o)) continue;
    const ReportEnsemble::Band* band = in.ensemble ? in.ensemble->band(o) : nullptr;
    FigureFile f{fmt::format("outlet-{}.svg", k + 1), "Outlet O:" + in.plan.reach_id[o], 620,
                 band ? fmt::format("Outflow of reach {} in member {} and its inflow peak, with the band the {} "
                                    "members' outflow spans (10th to 90th percentile at each time) and their median; "
                                    "discharge in {}, {}.",
                                    in.plan.reach_id[o], in.ensemble->reference, in.ensemble->members, q_unit, when)
                      : fmt::format("Outflow of reach {} and its inflow peak; discharge in {}, {}.",
                                    in.plan.reach_id[o], q_unit, when)};
    HydrographFigure fig = reachFigure(in, series, m, o, f.caption);
    if (band) {
      fig.bands.push_back({fmt::format("members 10-90 % ({} members)", in.ensemble->members),
                           scaled(band->p10, m.units), scaled(band->p90, m.units), {0.45, 0.6, 0.85}});
      Curve median;
      median.label = "members' median";
      median.q = scaled(band->p50, m.units);
      // The drawn median hydrograph's own peak (at a step).
      const auto top = std::max_element(median.q.begin(), median.q.end(), [](double a, double b) {
        return std::isnan(a) || (!std::isnan(b) && a < b);
      });
      if (top != median.q.end() && !std::isnan(*top)) {
        median.peak_q = *top;
        median.peak_t = in.results.axis.at(static_cast<double>(top - median.q.begin()));
      }
      median.colour = {0.2, 0.35, 0.7};
      median.line_width = 1.4;
      median.dashed = true;
      fig.curves.insert(fig.curves.begin() + 1, std::move(median));
      fig.curves.front().label += " (member " + in.ensemble->reference + ")";
    }
    drawHydrograph(folder / f.file, fig);
    m.outlet_figures.push_back(std::move(f));
    m.outlet_figure_reaches.push_back(o);
  }
  for (std::size_t k = 0; k < series.named().size(); ++k) {
    const std::uint32_t r = series.named()[k];
    if (!series.has(r)) continue;
    FigureFile f{fmt::format("reach-{}.svg", k + 1), "Reach " + in.plan.reach_id[r], 620,
                 fmt::format("Outflow of reach {} and its inflow peak; discharge in {}, {}.", in.plan.reach_id[r],
                             q_unit, when)};
    drawHydrograph(folder / f.file, reachFigure(in, series, m, r, f.caption));
    m.reach_figures.push_back(std::move(f));
  }
  for (std::size_t k = 0; k < m.hydrograph_confluences.size(); ++k) {
    const auto& node = in.results.nodes[m.hydrograph_confluences[k]];
    FigureFile f{fmt::format("confluence-{}.svg", k + 1), "Confluence " + node.node_id, 620,
                 fmt::format("Each incoming branch, their sum and the outflow below; discharge in {}, {}.", q_unit,
                             when)};
    drawHydrograph(folder / f.file, confluenceFigure(in, series, m, node, leavingReach(series, node.node_id)));
    m.confluence_figures.push_back(std::move(f));
  }
  for (std::size_t k = 0; k < std::min(m.shown_lakes.size(), kShownLakes); ++k) {
    const std::size_t l = m.shown_lakes[k];
    FigureFile f{fmt::format("lake-{}.svg", k + 1), "Lake " + in.lakes[l].lake->lake_id, 620,
                 fmt::format("Inflow and outflow in {} (left axis), level in {} (right axis), {}.", q_unit,
                             m.units.len_unit(), when)};
    drawLakeChart(folder / f.file, lakeFigure(in, m, l));
    m.lake_figures.push_back(std::move(f));
  }
  for (std::size_t k = 0; k < std::min(m.shown_gauges.size(), kShownGauges); ++k) {
    const std::size_t gi = m.shown_gauges[k];
    FigureFile f{fmt::format("gauge-{}.svg", k + 1), "Gauge " + in.gauges[gi].gauge_id, 620,
                 fmt::format("Observed and simulated discharge in {}, {}.", q_unit, when)};
    drawGaugeChart(folder / f.file, gaugeFigure(in, m, gi));
    m.gauge_figures.push_back(std::move(f));
  }
  if (m.timing_confluences.empty()) return;  // the page says there are none
  m.timing = {"timing.svg", "Branch peak times at the major confluences", 960,
              fmt::format("Each branch's peak time ({}) at the confluences with the largest combined peaks; "
                          "combined peaks in {}.",
                          offsetName(m.utc_offset_min), q_unit)};
  drawTiming(folder / m.timing.file, timingFigure(in, m));
}

}  // namespace reachwise::report::detail
