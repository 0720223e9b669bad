// One lake's panel: the flow into the lake and out of it on the left
// (discharge) axis, the lake's level on the right axis, the spillway crest
// as a line, the peaks marked, and a legend below giving each peak.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "Figures.hpp"
#include "ReportModel.hpp"

namespace reachwise::report::detail {

namespace {

constexpr double kWidth = 620, kLeastLeft = 64, kLeastRight = 64, kTop = 40, kPlotHeight = 220;
constexpr double kLegendRow = 18;

constexpr Rgb kInflowColour{0.902, 0.624, 0.000};   // the hydrographs' first series colour (Okabe & Ito)
constexpr Rgb kOutflowColour{0.08, 0.11, 0.35};     // as the outlet hydrographs' outflow
constexpr Rgb kLevelColour{0.000, 0.620, 0.451};    // Okabe & Ito bluish green
constexpr Rgb kCrestColour{0.45, 0.45, 0.45};

/// A value axis: `lo` at the bottom of the plot, `hi` at the top, ticks `step` apart.
struct Axis {
  double lo = 0, hi = 1, step = 1;
};

Axis dischargeAxis(const LakeFigure& f) {
  double top = 0;
  for (const auto* s : {&f.inflow, &f.outflow})
    for (const double v : *s)
      if (std::isfinite(v)) top = std::max(top, v);
  for (const double v : {f.inflow_peak, f.outflow_peak})
    if (std::isfinite(v)) top = std::max(top, v);
  if (!(top > 0)) top = 1;
  Axis a;
  a.step = niceStep(top * 1.05, 5);
  a.hi = std::ceil(top * 1.05 / a.step) * a.step;
  return a;
}

/// Levels from a little below the lowest (or the crest) to a little above
/// the highest, on whole ticks; a lake that barely moves still gets a
/// readable span of at least 10 cm.
Axis levelAxis(const LakeFigure& f) {
  double lo = INFINITY, hi = -INFINITY;
  for (const double v : f.level)
    if (std::isfinite(v)) lo = std::min(lo, v), hi = std::max(hi, v);
  if (std::isfinite(f.level_peak)) lo = std::min(lo, f.level_peak), hi = std::max(hi, f.level_peak);
  if (std::isfinite(f.crest_level)) lo = std::min(lo, f.crest_level), hi = std::max(hi, f.crest_level);
  if (!(hi >= lo)) lo = 0, hi = 1;
  const double span = std::max(hi - lo, 0.1);
  const double mid = (lo + hi) / 2;
  lo = std::min(lo, mid - span / 2), hi = std::max(hi, mid + span / 2);
  Axis a;
  a.step = niceStep(span * 1.1, 5);
  a.lo = std::floor((lo - 0.05 * span) / a.step) * a.step;
  a.hi = std::ceil((hi + 0.05 * span) / a.step) * a.step;
  return a;
}

void peakMarker(cairo_t* cr, double x, double y, double y_base, Rgb colour) {
  setColour(cr, colour, 0.45);
  cairo_set_line_width(cr, 1.0);
  const double dots[] = {2.0, 2.0};
  cairo_set_dash(cr, dots, 2, 0);
  cairo_move_to(cr, x, y);
  cairo_line_to(cr, x, y_base);
  cairo_stroke(cr);
  cairo_set_dash(cr, nullptr, 0, 0);
  cairo_arc(cr, x, y, 4.2, 0, 2 * M_PI);
  setColour(cr, colour);
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_set_line_width(cr, 1.2);
  cairo_stroke(cr);
}

void legendLine(cairo_t* cr, double x, double y, Rgb colour, double width, bool dashed, bool dotted = false) {
  setColour(cr, colour);
  cairo_set_line_width(cr, width);
  const double dash[] = {5.0, 3.0}, dots[] = {2.0, 2.0};
  if (dashed) cairo_set_dash(cr, dash, 2, 0);
  if (dotted) cairo_set_dash(cr, dots, 2, 0);
  cairo_move_to(cr, x, y - 4);
  cairo_line_to(cr, x + 26, y - 4);
  cairo_stroke(cr);
  cairo_set_dash(cr, nullptr, 0, 0);
}

}  // namespace

void drawLakeChart(const std::filesystem::path& file, const LakeFigure& fig) {
  const bool crest = std::isfinite(fig.crest_level);
  const double rows = crest ? 4 : 3;
  const double height = kTop + kPlotHeight + 58 + kLegendRow * rows + 8;
  Canvas canvas(file, kWidth, height, ImageFormat::Svg);
  cairo_t* cr = canvas.cr();

  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawTitle(cr, fig.title, kWidth);

  const Axis qa = dischargeAxis(fig), la = levelAxis(fig);
  // Room for the widest tick label of each axis beside its rotated title.
  const double left = plotLeft(valueLabelWidth(cr, qa.lo, qa.hi, qa.step), kLeastLeft);
  const double right = std::max(kLeastRight, 7 + valueLabelWidth(cr, la.lo, la.hi, la.step) + 6 + 22);
  const double x1 = kWidth - right, y0 = kTop + kPlotHeight;
  const double t0 = static_cast<double>(fig.start_unix_s);
  const double t1 = t0 + static_cast<double>(fig.steps > 1 ? fig.steps - 1 : 1) * fig.dt_s;
  const TimeScale ts{t0, t1, left, x1, fig.utc_offset_min};
  const auto qpix = [&](double q) { return y0 - (q - qa.lo) / (qa.hi - qa.lo) * kPlotHeight; };
  const auto lpix = [&](double h) { return y0 - (h - la.lo) / (la.hi - la.lo) * kPlotHeight; };

  // Discharge grid and ticks on the left, level ticks on the right.
  cairo_set_line_width(cr, 1.0);
  for (double q = qa.lo; q <= qa.hi + qa.step * 1e-6; q += qa.step) {
    const double y = std::round(qpix(q)) + 0.5;
    cairo_set_source_rgb(cr, 0.9, 0.9, 0.9);
    cairo_move_to(cr, left, y);
    cairo_line_to(cr, x1, y);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    drawText(cr, left - 6, y + 4, tickLabel(q, qa.step), 11, Align::Right);
  }
  for (double h = la.lo; h <= la.hi + la.step * 1e-6; h += la.step) {
    const double y = std::round(lpix(h)) + 0.5;
    setColour(cr, kLevelColour);
    cairo_move_to(cr, x1, y);
    cairo_line_to(cr, x1 + 4, y);
    cairo_stroke(cr);
    drawText(cr, x1 + 7, y + 4, tickLabel(h, la.step), 11, Align::Left);
  }
  drawTimeAxis(cr, ts, y0, kTop, kWidth);
  cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
  cairo_rectangle(cr, left + 0.5, kTop + 0.5, x1 - left - 1, kPlotHeight - 1);
  cairo_stroke(cr);
  drawText(cr, (left + x1) / 2, y0 + 48, "time (" + offsetName(fig.utc_offset_min) + ")", 11, Align::Centre);
  cairo_save(cr);
  cairo_translate(cr, 16, kTop + kPlotHeight / 2);
  cairo_rotate(cr, -M_PI / 2);
  drawText(cr, 0, 0, "discharge (" + fig.q_unit + ")", 11, Align::Centre);
  cairo_restore(cr);
  cairo_save(cr);
  cairo_translate(cr, kWidth - 10, kTop + kPlotHeight / 2);
  cairo_rotate(cr, -M_PI / 2);
  setColour(cr, kLevelColour);
  drawText(cr, 0, 0, "lake level (" + fig.len_unit + ")", 11, Align::Centre);
  cairo_restore(cr);

  // The crest, then the series, then the peaks on top.
  cairo_save(cr);
  cairo_rectangle(cr, left, kTop, x1 - left, kPlotHeight);
  cairo_clip(cr);
  if (crest) {
    const double y = lpix(fig.crest_level);
    setColour(cr, kCrestColour);
    cairo_set_line_width(cr, 1.2);
    const double dots[] = {2.0, 2.0};
    cairo_set_dash(cr, dots, 2, 0);
    cairo_move_to(cr, left, y);
    cairo_line_to(cr, x1, y);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
  }
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  const auto stroke = [&](const std::vector<double>& s, const std::function<double(double)>& ypix, Rgb colour,
                          double width, bool dashed) {
    if (s.empty()) return;
    tracePath(cr, s, ts, t0, fig.dt_s, ypix);
    setColour(cr, colour);
    cairo_set_line_width(cr, width);
    const double dash[] = {6.0, 3.0};
    cairo_set_dash(cr, dash, dashed ? 2 : 0, 0);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
  };
  stroke(fig.level, lpix, kLevelColour, 1.6, true);
  stroke(fig.inflow, qpix, kInflowColour, 1.8, false);
  stroke(fig.outflow, qpix, kOutflowColour, 2.2, false);
  if (std::isfinite(fig.level_peak) && std::isfinite(fig.level_peak_t))
    peakMarker(cr, ts.x(fig.level_peak_t), lpix(fig.level_peak), y0, kLevelColour);
  if (std::isfinite(fig.inflow_peak) && std::isfinite(fig.inflow_peak_t))
    peakMarker(cr, ts.x(fig.inflow_peak_t), qpix(fig.inflow_peak), y0, kInflowColour);
  if (std::isfinite(fig.outflow_peak) && std::isfinite(fig.outflow_peak_t))
    peakMarker(cr, ts.x(fig.outflow_peak_t), qpix(fig.outflow_peak), y0, kOutflowColour);
  cairo_restore(cr);

  // Legend: one row per series with its peak.
  const auto when = [&](double t) { return displayTime(t, fig.utc_offset_min); };
  const auto peak = [&](double v, double t, const std::string& unit, const char* what) {
    return std::isfinite(v) && std::isfinite(t) ? fmt::format("{} {:.2f} {} at {}", what, v, unit, when(t))
                                                : std::string("no peak");
  };
  struct Row {
    std::string label, value;
    Rgb colour;
    double width;
    bool dashed, dotted;
  };
  std::vector<Row> legend = {
      {"inflow (left axis)", peak(fig.inflow_peak, fig.inflow_peak_t, fig.q_unit, "peak"), kInflowColour, 1.8,
       false, false},
      {"outflow (left axis)", peak(fig.outflow_peak, fig.outflow_peak_t, fig.q_unit, "peak"), kOutflowColour, 2.2,
       false, false},
      {"level (right axis)", peak(fig.level_peak, fig.level_peak_t, fig.len_unit, "highest"), kLevelColour, 1.6,
       true, false}};
  if (crest)
    legend.push_back({"spillway crest (right axis)", fmt::format("{:.2f} {}", fig.crest_level, fig.len_unit),
                      kCrestColour, 1.2, false, true});
  double label_w = 150;
  for (const Row& r : legend) label_w = std::max(label_w, textWidth(cr, r.label, 11.5, true) + 12);
  double y = y0 + 58 + 10;
  for (const Row& r : legend) {
    legendLine(cr, left, y, r.colour, r.width + 0.4, r.dashed, r.dotted);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, left + 34, y, r.label, 11.5, Align::Left, true);
    cairo_set_source_rgb(cr, 0.25, 0.25, 0.25);
    drawText(cr, left + 34 + label_w, y, r.value, 11.5);
    y += kLegendRow;
  }
  canvas.finish();
}

}  // namespace reachwise::report::detail
