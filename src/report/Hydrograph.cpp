// One hydrograph panel: discharge against time for each curve, peaks
// marked, and a legend below the plot giving each peak's value and time.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "Figures.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace reachwise::report::detail {

namespace {

constexpr double kWidth = 620, kLeastLeft = 64, kRight = 18, kTop = 40, kPlotHeight = 220;
constexpr double kLegendRow = 18;

std::string localMinute(double t, int offset_min) {
  const std::string iso = io::formatIsoTime(std::round(t / 60.0) * 60.0, offset_min, 0);
  return iso.substr(0, 10) + " " + iso.substr(11, 5);
}

}  // namespace

void tracePath(cairo_t* cr, const std::vector<double>& q, const TimeScale& ts, double t0, double dt,
               const std::function<double(double)>& ypix) {
  const std::size_t n = q.size();
  const std::size_t columns = static_cast<std::size_t>(ts.x1 - ts.x0);
  if (n <= 2 * columns) {
    for (std::size_t k = 0; k < n; ++k) {
      const double x = ts.x(t0 + static_cast<double>(k) * dt);
      if (k == 0) cairo_move_to(cr, x, ypix(q[k]));
      else cairo_line_to(cr, x, ypix(q[k]));
    }
    return;
  }
  std::size_t k = 0;
  bool first = true;
  for (std::size_t c = 0; c < columns && k < n; ++c) {
    const std::size_t end = std::min(n, (c + 1) * n / columns);
    std::size_t lo = k, hi = k;
    for (std::size_t j = k; j < end; ++j) {
      if (q[j] < q[lo]) lo = j;
      if (q[j] > q[hi]) hi = j;
    }
    for (const std::size_t j : {std::min(lo, hi), std::max(lo, hi)}) {
      const double x = ts.x(t0 + static_cast<double>(j) * dt), y = ypix(q[j]);
      if (first) cairo_move_to(cr, x, y);
      else cairo_line_to(cr, x, y);
      first = false;
    }
    k = std::max(end, k + 1);
  }
}

void drawHydrograph(const std::filesystem::path& file, const HydrographFigure& fig) {
  const double height =
      kTop + kPlotHeight + 58 + kLegendRow * static_cast<double>(fig.curves.size() + fig.bands.size()) + 8;
  Canvas canvas(file, kWidth, height, ImageFormat::Svg);
  cairo_t* cr = canvas.cr();

  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawTitle(cr, fig.title, kWidth);

  const std::size_t steps = fig.steps;
  double q_max = 0;
  for (const Curve& c : fig.curves) {
    for (const double v : c.q)
      if (std::isfinite(v)) q_max = std::max(q_max, v);
    if (std::isfinite(c.peak_q)) q_max = std::max(q_max, c.peak_q);
  }
  for (const Band& b : fig.bands)
    for (const double v : b.hi)
      if (std::isfinite(v)) q_max = std::max(q_max, v);
  if (!(q_max > 0)) q_max = 1;
  const double q_step = niceStep(q_max * 1.05, 5);
  const double q_top = std::ceil(q_max * 1.05 / q_step) * q_step;
  const double left = plotLeft(valueLabelWidth(cr, 0, q_top, q_step), kLeastLeft);

  const double t0 = static_cast<double>(fig.start_unix_s);
  const double t1 = t0 + static_cast<double>(steps > 1 ? steps - 1 : 1) * fig.dt_s;
  const TimeScale ts{t0, t1, left, kWidth - kRight, fig.utc_offset_min};
  const double y0 = kTop + kPlotHeight;
  const auto ypix = [&](double q) { return y0 - q / q_top * kPlotHeight; };

  // Grid and value axis.
  cairo_set_line_width(cr, 1.0);
  for (double q = 0; q <= q_top + q_step * 1e-6; q += q_step) {
    const double y = std::round(ypix(q)) + 0.5;
    cairo_set_source_rgb(cr, 0.9, 0.9, 0.9);
    cairo_move_to(cr, left, y);
    cairo_line_to(cr, kWidth - kRight, y);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    drawText(cr, left - 6, y + 4, tickLabel(q, q_step), 11, Align::Right);
  }
  drawTimeAxis(cr, ts, y0, kTop, kWidth);
  cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
  cairo_rectangle(cr, left + 0.5, kTop + 0.5, kWidth - kRight - left - 1, kPlotHeight - 1);
  cairo_stroke(cr);
  drawText(cr, (left + kWidth - kRight) / 2, y0 + 48, "time (" + offsetName(fig.utc_offset_min) + ")", 11,
           Align::Centre);
  cairo_save(cr);
  cairo_translate(cr, 16, kTop + kPlotHeight / 2);
  cairo_rotate(cr, -M_PI / 2);
  drawText(cr, 0, 0, "discharge (" + fig.q_unit + ")", 11, Align::Centre);
  cairo_restore(cr);

  // Curves, then the peak markers on top of every curve.
  cairo_save(cr);
  cairo_rectangle(cr, left, kTop, kWidth - kRight - left, kPlotHeight);
  cairo_clip(cr);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  for (const Band& b : fig.bands) {
    // The upper edge forward, the lower edge back: one closed, filled outline.
    const std::size_t n = std::min(b.lo.size(), b.hi.size());
    if (n < 2) continue;
    for (std::size_t k = 0; k < n; ++k) {
      const double x = ts.x(t0 + static_cast<double>(k) * fig.dt_s);
      if (k == 0) cairo_move_to(cr, x, ypix(b.hi[k]));
      else cairo_line_to(cr, x, ypix(b.hi[k]));
    }
    for (std::size_t k = n; k-- > 0;) cairo_line_to(cr, ts.x(t0 + static_cast<double>(k) * fig.dt_s), ypix(b.lo[k]));
    cairo_close_path(cr);
    setColour(cr, b.colour, 0.35);
    cairo_fill(cr);
  }
  for (const Curve& c : fig.curves) {
    if (c.q.empty()) continue;
    tracePath(cr, c.q, ts, t0, fig.dt_s, ypix);
    setColour(cr, c.colour);
    cairo_set_line_width(cr, c.line_width);
    const double dash[] = {5.0, 3.0};
    cairo_set_dash(cr, dash, c.dashed ? 2 : 0, 0);
    cairo_stroke(cr);
  }
  cairo_set_dash(cr, nullptr, 0, 0);
  for (const Curve& c : fig.curves) {
    if (!std::isfinite(c.peak_q) || !std::isfinite(c.peak_t)) continue;
    const double x = ts.x(c.peak_t), y = ypix(c.peak_q);
    setColour(cr, c.colour, 0.45);
    cairo_set_line_width(cr, 1.0);
    const double dots[] = {2.0, 2.0};
    cairo_set_dash(cr, dots, 2, 0);
    cairo_move_to(cr, x, y);
    cairo_line_to(cr, x, y0);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
    cairo_arc(cr, x, y, 4.2, 0, 2 * M_PI);
    setColour(cr, c.colour);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_set_line_width(cr, 1.2);
    cairo_stroke(cr);
  }
  cairo_restore(cr);

  // Legend: one row per curve with its peak, the peaks in one column.
  double label_w = 150;
  for (const Curve& c : fig.curves) label_w = std::max(label_w, textWidth(cr, c.label, 11.5, true) + 12);
  double y = y0 + 58 + 10;
  for (const Band& b : fig.bands) {
    setColour(cr, b.colour, 0.35);
    cairo_rectangle(cr, left, y - 9, 26, 10);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, left + 34, y, b.label, 11.5, Align::Left, true);
    y += kLegendRow;
  }
  for (const Curve& c : fig.curves) {
    setColour(cr, c.colour);
    if (c.q.empty()) {
      // A peak without a drawn series: the legend shows its marker only.
      cairo_arc(cr, left + 13, y - 4, 4.2, 0, 2 * M_PI);
      cairo_fill(cr);
    } else {
      cairo_set_line_width(cr, c.line_width + 0.4);
      const double dash[] = {5.0, 3.0};
      cairo_set_dash(cr, dash, c.dashed ? 2 : 0, 0);
      cairo_move_to(cr, left, y - 4);
      cairo_line_to(cr, left + 26, y - 4);
      cairo_stroke(cr);
      cairo_set_dash(cr, nullptr, 0, 0);
    }
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, left + 34, y, c.label, 11.5, Align::Left, true);
    const std::string peak =
        std::isfinite(c.peak_q) && std::isfinite(c.peak_t)
            ? fmt::format("peak {:.2f} {} at {}", c.peak_q, fig.q_unit, localMinute(c.peak_t, fig.utc_offset_min))
            : std::string("no peak");
    cairo_set_source_rgb(cr, 0.25, 0.25, 0.25);
    drawText(cr, left + 34 + label_w, y, peak, 11.5);
    y += kLegendRow;
  }
  canvas.finish();
}

}  // namespace reachwise::report::detail
