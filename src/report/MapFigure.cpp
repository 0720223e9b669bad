// The network map: reaches coloured (and widened) by peak discharge,
// lakes filled, confluences and outlets marked, a colour legend, a scale
// bar and a north arrow in a strip below the map.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>

#include "Figures.hpp"
#include "reachwise/network/Lakes.hpp"

namespace reachwise::report::detail {

namespace {

// Water areas in a light blue under the rivers, outlined a shade darker,
// labelled in a dark blue (common cartographic practice).
constexpr Rgb kLakeFill{0.776, 0.878, 0.961}, kLakeEdge{0.38, 0.58, 0.78}, kLakeLabel{0.05, 0.25, 0.50};
constexpr Rgb kGaugeFill{0.835, 0.369, 0.000}, kGaugeLabel{0.50, 0.20, 0.00};  // Okabe & Ito vermillion

constexpr double kMargin = 10, kLegendRow = 84;
constexpr double kMaxPlotWidth = 940, kMaxPlotHeight = 760, kMinPlotWidth = 540, kMinPlotHeight = 360;

using layout::Box;

constexpr Rgb kBifurcationFill{0.800, 0.475, 0.655};  // Okabe & Ito reddish purple
constexpr double kTitle = 26;       // the title's strip above the map
constexpr double kSmallLake = 8;    // px: a lake smaller than this both ways also gets a dot

/// The box of a label (text plus its halo) whose text starts at x with
/// its baseline at y, and back.
Box haloBox(double x, double baseline, double width, double size) {
  const Box t = layout::textBox(x, baseline, width, size);
  return {t.x0 - 1.5, t.y0 - 1.5, t.x1 + 1.5, t.y1 + 1.5};
}
void drawInBox(cairo_t* cr, const Box& b, std::string_view text, double size, Rgb colour) {
  drawHaloText(cr, b.x0 + 1.5, b.y1 - 1.5 - 0.25 * size, text, size, true, colour);
}

/// Position in [0, 1] of a value on the colour scale.
struct ValueScale {
  double lo = 0, hi = 1;
  bool log = false;
  double t(double v) const {
    if (!std::isfinite(v)) return NAN;
    if (log) return v <= 0 ? 0.0 : (std::log(v) - std::log(lo)) / (std::log(hi) - std::log(lo));
    return (v - lo) / (hi - lo);
  }
};

ValueScale valueScale(const std::vector<MapLine>& lines) {
  double lo = INFINITY, hi = 0;
  for (const MapLine& l : lines)
    if (std::isfinite(l.value) && l.value > 0) lo = std::min(lo, l.value), hi = std::max(hi, l.value);
  ValueScale s;
  if (!(hi > 0)) return s;
  // A log scale once the flows span more than a factor 30, so that small
  // tributaries do not all take the same colour (common practice).
  if (hi / lo > 30) {
    s.log = true;
    s.lo = lo;
    s.hi = hi;
  } else {
    s.lo = 0;
    s.hi = hi;
  }
  return s;
}

/// Tick values of the colour legend: 1-2-5 steps on a log scale.
std::vector<double> legendTicks(const ValueScale& s) {
  std::vector<double> ticks;
  if (!s.log) {
    const double step = niceStep(s.hi - s.lo, 5);
    for (double v = std::ceil(s.lo / step) * step; v <= s.hi * (1 + 1e-9); v += step) ticks.push_back(v);
    return ticks;
  }
  for (double mag = std::pow(10.0, std::floor(std::log10(s.lo))); mag <= s.hi; mag *= 10)
    for (const double f : {1.0, 2.0, 5.0})
      if (f * mag >= s.lo * (1 - 1e-9) && f * mag <= s.hi * (1 + 1e-9)) ticks.push_back(f * mag);
  return ticks;
}

std::string legendLabel(double v) {
  if (v >= 100 || v == std::floor(v)) return fmt::format("{:.0f}", v);
  if (v >= 1) return fmt::format("{:.1f}", v);
  return fmt::format("{:.2g}", v);
}

void drawColourLegend(cairo_t* cr, const MapFigure& map, const ValueScale& vs, double x, double y) {
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, x, y, map.value_label + (vs.log ? ", log scale" : ""), 12, Align::Left, true);
  const double bx = x, by = y + 10, bw = 280, bh = 14;
  cairo_pattern_t* grad = cairo_pattern_create_linear(bx, 0, bx + bw, 0);
  for (int k = 0; k <= 16; ++k) {
    const Rgb c = rampColour(k / 16.0);
    cairo_pattern_add_color_stop_rgb(grad, k / 16.0, c.r, c.g, c.b);
  }
  cairo_rectangle(cr, bx, by, bw, bh);
  cairo_set_source(cr, grad);
  cairo_fill(cr);
  cairo_pattern_destroy(grad);
  cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
  cairo_set_line_width(cr, 1);
  cairo_rectangle(cr, bx + 0.5, by + 0.5, bw - 1, bh - 1);
  cairo_stroke(cr);
  double last_right = -INFINITY;
  for (const double v : legendTicks(vs)) {
    const double tx = bx + vs.t(v) * bw;
    cairo_move_to(cr, std::round(tx) + 0.5, by + bh);
    cairo_line_to(cr, std::round(tx) + 0.5, by + bh + 4);
    cairo_stroke(cr);
    const std::string label = legendLabel(v);
    const double w = textWidth(cr, label, 11);
    if (tx - w / 2 < last_right + 4) continue;  // keep tick labels apart
    drawText(cr, tx, by + bh + 16, label, 11, Align::Centre);
    last_right = tx + w / 2;
  }
}

/// Scale bar: a round length about 150 px long, in km / m (or mi / ft).
void drawScaleBar(cairo_t* cr, const MapFigure& map, double px_per_unit_x, double x, double y) {
  double px_per_display = px_per_unit_x;  // pixels per displayed unit
  std::string small = map.crs_unit, big;
  double big_factor = 0;
  if (std::isfinite(map.metres_per_unit_x) && map.metres_per_unit_x > 0) {
    const double px_per_m = px_per_unit_x / map.metres_per_unit_x;
    if (map.feet) {
      px_per_display = px_per_m * 0.3048;
      small = "ft", big = "mi", big_factor = 5280;
    } else {
      px_per_display = px_per_m;
      small = "m", big = "km", big_factor = 1000;
    }
  }
  // The longest 1-2-5 length that fits in 150 px (so the bar is 60-150 px).
  const double length = 150 / px_per_display;
  std::string unit = small;
  double factor = 1;
  if (big_factor > 0 && length >= big_factor) unit = big, factor = big_factor;
  const double target = length / factor, mag = std::pow(10.0, std::floor(std::log10(target)));
  double nice = mag;
  for (const double f : {2.0, 5.0})
    if (f * mag <= target) nice = f * mag;
  const double w = nice * factor * px_per_display;
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, x, y, "scale", 12, Align::Left, true);
  const double by = y + 12;
  for (int k = 0; k < 4; ++k) {
    cairo_rectangle(cr, x + k * w / 4, by, w / 4, 6);
    if (k % 2 == 0) cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
    else cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
    cairo_set_line_width(cr, 1);
    cairo_stroke(cr);
  }
  drawText(cr, x, by + 20, "0", 11, Align::Centre);
  drawText(cr, x + w, by + 20, fmt::format("{:g} {}", nice, unit), 11, Align::Right);
}

void drawMarker(cairo_t* cr, MapMarker::Kind kind, double x, double y) {
  cairo_set_line_width(cr, 1.3);
  switch (kind) {
    case MapMarker::Kind::Confluence:
      cairo_arc(cr, x, y, 2.8, 0, 2 * M_PI);
      cairo_set_source_rgb(cr, 1, 1, 1);
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
      break;
    case MapMarker::Kind::MajorConfluence:
      cairo_arc(cr, x, y, 5.5, 0, 2 * M_PI);
      setColour(cr, seriesColour(0));
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      break;
    case MapMarker::Kind::Outlet:
      cairo_rectangle(cr, x - 5.5, y - 5.5, 11, 11);
      cairo_set_source_rgb(cr, 0.70, 0.09, 0.17);
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      break;
    case MapMarker::Kind::Bifurcation:  // a diamond: one reach splits
      cairo_move_to(cr, x, y - 6);
      cairo_line_to(cr, x + 6, y);
      cairo_line_to(cr, x, y + 6);
      cairo_line_to(cr, x - 6, y);
      cairo_close_path(cr);
      setColour(cr, kBifurcationFill);
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      break;
  }
  cairo_stroke(cr);
}

/// A gauge: a small triangle pointing up, centred on (x, y).
void drawGaugeMarker(cairo_t* cr, double x, double y) {
  cairo_move_to(cr, x, y - 6);
  cairo_line_to(cr, x + 5.5, y + 4);
  cairo_line_to(cr, x - 5.5, y + 4);
  cairo_close_path(cr);
  setColour(cr, kGaugeFill);
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_set_line_width(cr, 1.2);
  cairo_stroke(cr);
}

/// A lake too small to see at the map's scale: a dot in the lakes' colours.
void drawLakeDot(cairo_t* cr, double x, double y) {
  cairo_arc(cr, x, y, 4.5, 0, 2 * M_PI);
  setColour(cr, kLakeFill);
  cairo_fill_preserve(cr);
  setColour(cr, kLakeEdge);
  cairo_set_line_width(cr, 1.4);
  cairo_stroke(cr);
}

/// Rows of the symbol legend (its height is 18 px a row below its heading).
int markerLegendRows(bool bifurcations, bool lakes, bool gauges) {
  return 3 + (bifurcations ? 1 : 0) + (lakes ? 1 : 0) + (gauges ? 1 : 0);
}

void drawMarkerLegend(cairo_t* cr, double x, double y, bool bifurcations, bool lakes, bool gauges) {
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, x, y, lakes ? "nodes and lakes" : "nodes", 12, Align::Left, true);
  std::vector<std::pair<MapMarker::Kind, const char*>> items = {
      {MapMarker::Kind::Outlet, "outlet"},
      {MapMarker::Kind::MajorConfluence, "confluence with hydrograph"},
      {MapMarker::Kind::Confluence, "other confluence"}};
  if (bifurcations) items.push_back({MapMarker::Kind::Bifurcation, "bifurcation (the flow splits)"});
  double yy = y + 18;
  for (const auto& [kind, text] : items) {
    drawMarker(cr, kind, x + 7, yy - 4);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, x + 20, yy, text, 11);
    yy += 18;
  }
  if (lakes) {
    cairo_rectangle(cr, x - 1.5, yy - 9.5, 9, 10);
    setColour(cr, kLakeFill);
    cairo_fill_preserve(cr);
    setColour(cr, kLakeEdge);
    cairo_set_line_width(cr, 1);
    cairo_stroke(cr);
    drawLakeDot(cr, x + 13, yy - 4.5);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, x + 24, yy, "lake or reservoir (a dot when small)", 11);
    yy += 18;
  }
  if (!gauges) return;
  drawGaugeMarker(cr, x + 7, yy - 4);
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, x + 20, yy, "gauge (observed discharge)", 11);
}

/// Where a lake's label is tried first: the exterior ring's centroid when
/// it lies inside the lake, else the first vertex.
network::Point2 lakeAnchor(const std::vector<std::vector<network::Point2>>& rings) {
  if (rings.empty() || rings.front().empty()) return {NAN, NAN};
  const auto& r = rings.front();
  // Centroid of a simple polygon (the shoelace formula; common practice).
  double a = 0, cx = 0, cy = 0;
  for (std::size_t i = 0, j = r.size() - 1; i < r.size(); j = i++) {
    const double c = r[j].x * r[i].y - r[i].x * r[j].y;
    a += c, cx += (r[j].x + r[i].x) * c, cy += (r[j].y + r[i].y) * c;
  }
  if (a != 0) {
    const network::Point2 p{cx / (3 * a), cy / (3 * a)};
    if (network::insideRings(rings, p)) return p;
  }
  return r.front();
}

void drawNorthArrow(cairo_t* cr, double x, double y) {
  cairo_move_to(cr, x, y);
  cairo_line_to(cr, x + 8, y + 24);
  cairo_line_to(cr, x, y + 18);
  cairo_close_path(cr);
  cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
  cairo_fill(cr);
  cairo_move_to(cr, x, y);
  cairo_line_to(cr, x - 8, y + 24);
  cairo_line_to(cr, x, y + 18);
  cairo_close_path(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 0.15, 0.15, 0.15);
  cairo_set_line_width(cr, 1);
  cairo_stroke(cr);
  drawText(cr, x, y + 38, "N", 12, Align::Centre, true);
}

}  // namespace

MapDrawn drawMap(const std::filesystem::path& file, const MapFigure& map, ImageFormat format) {
  double xmin = INFINITY, xmax = -INFINITY, ymin = INFINITY, ymax = -INFINITY;
  for (const MapLine& l : map.lines)
    for (const auto& p : *l.line) {
      xmin = std::min(xmin, p.x), xmax = std::max(xmax, p.x);
      ymin = std::min(ymin, p.y), ymax = std::max(ymax, p.y);
    }
  for (const MapLake& l : map.lakes)
    for (const auto& ring : *l.rings)
      for (const auto& p : ring) {
        xmin = std::min(xmin, p.x), xmax = std::max(xmax, p.x);
        ymin = std::min(ymin, p.y), ymax = std::max(ymax, p.y);
      }
  for (const MapGauge& g : map.gauges)
    if (std::isfinite(g.x) && std::isfinite(g.y)) {
      xmin = std::min(xmin, g.x), xmax = std::max(xmax, g.x);
      ymin = std::min(ymin, g.y), ymax = std::max(ymax, g.y);
    }
  if (!(xmax >= xmin)) xmin = 0, xmax = 1, ymin = 0, ymax = 1;
  const double dx = std::max((xmax - xmin) * map.aspect_x, 1e-9), dy = std::max(ymax - ymin, 1e-9);
  // The map takes the network's shape within kMaxPlot; a tall network gets
  // a narrow map, so that the page can put the outlets beside it.
  const double pad = 28;  // room for markers and labels at the edge
  const double s = std::min((kMaxPlotWidth - 2 * pad) / dx, (kMaxPlotHeight - 2 * pad) / dy);
  const double pw = std::max(dx * s + 2 * pad, kMinPlotWidth), ph = std::max(dy * s + 2 * pad, kMinPlotHeight);
  const double top = kMargin + kTitle;
  const double cx = (xmin + xmax) / 2, cy = (ymin + ymax) / 2;
  const auto X = [&](double x) { return kMargin + pw / 2 + (x - cx) * map.aspect_x * s; };
  const auto Y = [&](double y) { return top + ph / 2 - (y - cy) * s; };

  // Legend blocks flow left to right and wrap below the map; the symbol
  // legend, the tallest, comes last.
  const double block_w[] = {290, 160, 230};
  double bx[3], by[3], cursor = kMargin + 10, row_y = top + ph + 28;
  for (int b = 0; b < 3; ++b) {
    if (cursor + block_w[b] > kMargin + pw && cursor > kMargin + 10) cursor = kMargin + 10, row_y += kLegendRow;
    bx[b] = cursor, by[b] = row_y;
    cursor += block_w[b] + 10;
  }
  const bool lakes = !map.lakes.empty(), gauges = !map.gauges.empty();
  const bool bifurcations = std::any_of(map.markers.begin(), map.markers.end(),
                                        [](const MapMarker& m) { return m.kind == MapMarker::Kind::Bifurcation; });
  const double width = pw + 2 * kMargin,
               height = row_y + std::max(44.0, 18.0 * markerLegendRows(bifurcations, lakes, gauges)) + 12;

  Canvas canvas(file, width, height, format);
  cairo_t* cr = canvas.cr();
  drawTitle(cr, map.title, width);
  cairo_set_source_rgb(cr, 0.975, 0.975, 0.965);
  cairo_rectangle(cr, kMargin, top, pw, ph);
  cairo_fill(cr);

  // Lakes under the rivers (a reach may run into a reservoir's outline).
  cairo_set_fill_rule(cr, CAIRO_FILL_RULE_EVEN_ODD);  // holes stay open
  std::vector<Box> lake_box;
  for (const MapLake& l : map.lakes) {
    Box b{INFINITY, INFINITY, -INFINITY, -INFINITY};
    for (const auto& ring : *l.rings) {
      if (ring.size() < 3) continue;
      bool first = true;
      for (const auto& p : ring) {
        (first ? cairo_move_to : cairo_line_to)(cr, X(p.x), Y(p.y));
        first = false;
        b.x0 = std::min(b.x0, X(p.x)), b.x1 = std::max(b.x1, X(p.x));
        b.y0 = std::min(b.y0, Y(p.y)), b.y1 = std::max(b.y1, Y(p.y));
      }
      cairo_close_path(cr);
    }
    lake_box.push_back(b);
    setColour(cr, kLakeFill);
    cairo_fill_preserve(cr);
    setColour(cr, kLakeEdge);
    cairo_set_line_width(cr, 1.0);
    cairo_stroke(cr);
  }
  cairo_set_fill_rule(cr, CAIRO_FILL_RULE_WINDING);

  // Reaches, smallest flows first so that large rivers are drawn on top.
  const ValueScale vs = valueScale(map.lines);
  std::vector<std::size_t> order(map.lines.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    const double va = std::isfinite(map.lines[a].value) ? map.lines[a].value : -1;
    const double vb = std::isfinite(map.lines[b].value) ? map.lines[b].value : -1;
    return va < vb;
  });
  cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  for (const std::size_t i : order) {
    const MapLine& l = map.lines[i];
    if (l.line->size() < 2) continue;
    bool first = true;
    for (const auto& p : *l.line) {
      (first ? cairo_move_to : cairo_line_to)(cr, X(p.x), Y(p.y));
      first = false;
    }
    const double t = vs.t(l.value);
    setColour(cr, rampColour(t));
    cairo_set_line_width(cr, std::isfinite(t) ? 1.2 + 4.0 * std::clamp(t, 0.0, 1.0) : 1.0);
    cairo_stroke(cr);
  }

  // Symbols (minor first), each but the minor confluences an obstacle to
  // every label; a lake too small to see gets a dot on top of the rivers.
  const Box frame{kMargin, top, kMargin + pw, top + ph};
  layout::LabelPlacer placer(frame);
  placer.block({kMargin + pw - 36, top + 6, kMargin + pw - 12, top + 56});  // the north arrow
  std::vector<network::Point2> lake_anchor;
  for (std::size_t i = 0; i < map.lakes.size(); ++i) {
    lake_anchor.push_back(lakeAnchor(*map.lakes[i].rings));
    const Box& b = lake_box[i];
    if (!std::isfinite(lake_anchor[i].x) || !(b.x1 - b.x0 < kSmallLake && b.y1 - b.y0 < kSmallLake)) continue;
    const double x = X(lake_anchor[i].x), y = Y(lake_anchor[i].y);
    drawLakeDot(cr, x, y);
    lake_box[i] = {std::min(b.x0, x - 5), std::min(b.y0, y - 5), std::max(b.x1, x + 5), std::max(b.y1, y + 5)};
    placer.block(lake_box[i]);
  }
  for (const auto kind : {MapMarker::Kind::Confluence, MapMarker::Kind::Bifurcation,
                          MapMarker::Kind::MajorConfluence, MapMarker::Kind::Outlet})
    for (const MapMarker& m : map.markers) {
      if (m.kind != kind) continue;
      const double x = X(m.x), y = Y(m.y);
      drawMarker(cr, kind, x, y);
      if (kind != MapMarker::Kind::Confluence) placer.block({x - 6, y - 6, x + 6, y + 6});
    }
  for (const MapGauge& g : map.gauges) {
    const double x = X(g.x), y = Y(g.y);
    drawGaugeMarker(cr, x, y);
    placer.block({x - 6, y - 7, x + 6, y + 5});
  }

  // Node labels by priority, highest first: each takes the first free
  // place around its symbol, or is left out (the page's tables list them).
  MapDrawn drawn;
  std::vector<const MapMarker*> labelled;
  for (const MapMarker& m : map.markers)
    if (!m.label.empty()) labelled.push_back(&m);
  std::stable_sort(labelled.begin(), labelled.end(),
                   [](const MapMarker* a, const MapMarker* b) { return a->priority > b->priority; });
  for (const MapMarker* m : labelled) {
    constexpr double size = 11.5;
    const double w = textWidth(cr, m->label, size, true);
    const Box shape = haloBox(0, 0, w, size);
    const auto tries = layout::pointLabelCandidates(X(m->x), Y(m->y), shape.x1 - shape.x0, shape.y1 - shape.y0, 7);
    if (const auto b = placer.place(tries)) {
      drawInBox(cr, *b, m->label, size, {0.1, 0.1, 0.1});
      drawn.labels.push_back(m->label);
    }
  }
  // Gauge labels after the nodes', in the figure's order of priority; a
  // label with no free place is left out (the gauge's panel and the
  // table name it).
  for (const MapGauge& g : map.gauges) {
    if (g.label.empty()) continue;
    constexpr double size = 11;
    const double w = textWidth(cr, g.label, size, true);
    const Box shape = haloBox(0, 0, w, size);
    const auto tries = layout::pointLabelCandidates(X(g.x), Y(g.y), shape.x1 - shape.x0, shape.y1 - shape.y0, 7);
    if (const auto b = placer.place(tries)) drawInBox(cr, *b, g.label, size, kGaugeLabel);
  }
  // Lake labels after the nodes' (which they must not hide), in the
  // figure's order of priority: on the lake, else beside its outline; a
  // label with no free place is left out (the lake's panel names it).
  // A label covers no other lake either (the outlines' boxes, in pixels).
  for (std::size_t i = 0; i < map.lakes.size(); ++i) {
    const MapLake& l = map.lakes[i];
    if (l.label.empty() || !std::isfinite(lake_anchor[i].x)) continue;
    const double bx0 = lake_box[i].x0, bx1 = lake_box[i].x1, by0 = lake_box[i].y0, by1 = lake_box[i].y1;
    constexpr double size = 11.5;
    const double w = textWidth(cr, l.label, size, true);
    const double ax = X(lake_anchor[i].x), ay = Y(lake_anchor[i].y);
    // Left x and baseline y of each place tried: on the lake when the label
    // fits inside its outline's box, else beside the outline (a label on a
    // small lake would hide it).
    const bool fits = w + 4 <= bx1 - bx0 && size + 4 <= by1 - by0;
    const std::pair<double, double> places[] = {
        {ax - w / 2, ay + 4},   {bx1 + 5, ay + 4},      {bx0 - 5 - w, ay + 4},  {ax - w / 2, by0 - 5},
        {ax - w / 2, by1 + 14}, {bx1 + 5, by0 - 3},     {bx0 - 5 - w, by0 - 3}, {bx1 + 5, by1 + 12},
        {bx0 - 5 - w, by1 + 12}};
    std::vector<Box> tries;
    for (std::size_t t = fits ? 0 : 1; t < std::size(places); ++t)
      tries.push_back(haloBox(places[t].first, places[t].second, w, size));
    std::vector<Box> others;
    for (std::size_t j = 0; j < lake_box.size(); ++j)
      if (j != i) others.push_back(lake_box[j]);
    if (const auto b = placer.place(tries, others)) drawInBox(cr, *b, l.label, size, kLakeLabel);
  }
  drawn.label_boxes = placer.placed();
  drawNorthArrow(cr, kMargin + pw - 24, top + 12);
  cairo_set_source_rgb(cr, 0.55, 0.55, 0.55);
  cairo_set_line_width(cr, 1);
  cairo_rectangle(cr, kMargin + 0.5, top + 0.5, pw - 1, ph - 1);
  cairo_stroke(cr);

  drawColourLegend(cr, map, vs, bx[0], by[0]);
  drawScaleBar(cr, map, s * map.aspect_x, bx[1], by[1]);
  drawMarkerLegend(cr, bx[2], by[2], bifurcations, lakes, gauges);
  canvas.finish();
  drawn.width = width;
  drawn.height = height;
  return drawn;
}

}  // namespace reachwise::report::detail
