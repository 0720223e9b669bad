// One gauge's panel: observed discharge (points joined by a dashed line,
// broken where observations are missing), simulated discharge (a line) and
// optionally an earlier simulation (a grey line, e.g. before calibration)
// on one discharge axis against time, with a legend below.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "Figures.hpp"
#include "ReportModel.hpp"

namespace reachwise::report::detail {

namespace {

constexpr double kWidth = 620, kLeastLeft = 64, kRight = 20, kTop = 40, kPlotHeight = 220;
constexpr double kLegendRow = 18;

constexpr Rgb kObservedColour{0.835, 0.369, 0.000};  // Okabe & Ito vermillion
constexpr Rgb kSimulatedColour{0.08, 0.11, 0.35};    // as the outlet hydrographs' outflow
constexpr Rgb kEarlierColour{0.62, 0.62, 0.62};      // a grey the other two stand out against

/// Above this many observations in the plot the points are left out (they
/// would merge into a band); the dashed line still shows every sample.
constexpr std::size_t kMaxPoints = 400;

}  // namespace

void drawGaugeChart(const std::filesystem::path& file, const GaugeFigure& fig) {
  const double height = kTop + kPlotHeight + 58 + kLegendRow * (fig.earlier.empty() ? 2 : 3) + 8;
  Canvas canvas(file, kWidth, height, ImageFormat::Svg);
  cairo_t* cr = canvas.cr();

  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawTitle(cr, fig.title, kWidth);

  const double x1 = kWidth - kRight, y0 = kTop + kPlotHeight;
  const double t0 = static_cast<double>(fig.start_unix_s);
  const double t1 = t0 + static_cast<double>(fig.steps > 1 ? fig.steps - 1 : 1) * fig.dt_s;
  double top = 0;
  std::size_t n_points = 0;
  for (const auto* series : {&fig.simulated, &fig.earlier})
    for (const double v : *series)
      if (std::isfinite(v)) top = std::max(top, v);
  for (const double v : fig.observed)
    if (std::isfinite(v)) top = std::max(top, v), ++n_points;
  if (!(top > 0)) top = 1;
  const double step = niceStep(top * 1.05, 5), hi = std::ceil(top * 1.05 / step) * step;
  const double left = plotLeft(valueLabelWidth(cr, 0, hi, step), kLeastLeft);
  const TimeScale ts{t0, t1, left, x1, fig.utc_offset_min};
  const auto qpix = [&](double q) { return y0 - q / hi * kPlotHeight; };

  cairo_set_line_width(cr, 1.0);
  for (double q = 0; q <= hi + step * 1e-6; q += step) {
    const double y = std::round(qpix(q)) + 0.5;
    cairo_set_source_rgb(cr, 0.9, 0.9, 0.9);
    cairo_move_to(cr, left, y);
    cairo_line_to(cr, x1, y);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    drawText(cr, left - 6, y + 4, tickLabel(q, step), 11, Align::Right);
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
  cairo_rectangle(cr, left, kTop, x1 - left, kPlotHeight);
  cairo_clip(cr);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  // The earlier run under the simulated one, thinner.
  if (!fig.earlier.empty()) {
    tracePath(cr, fig.earlier, ts, t0, fig.dt_s, qpix);
    setColour(cr, kEarlierColour);
    cairo_set_line_width(cr, 1.6);
    cairo_stroke(cr);
  }
  // Simulated: one line (the run's outflow has no gaps).
  if (!fig.simulated.empty()) {
    tracePath(cr, fig.simulated, ts, t0, fig.dt_s, qpix);
    setColour(cr, kSimulatedColour);
    cairo_set_line_width(cr, 2.0);
    cairo_stroke(cr);
  }
  // Observed: dashed runs between missing values, then the points.
  const double dash[] = {5.0, 3.0};
  cairo_set_dash(cr, dash, 2, 0);
  setColour(cr, kObservedColour);
  cairo_set_line_width(cr, 1.4);
  bool open = false;
  for (std::size_t k = 0; k < fig.observed.size(); ++k) {
    const double v = fig.observed[k];
    if (!std::isfinite(v)) {
      open = false;
      continue;
    }
    const double x = ts.x(t0 + static_cast<double>(k) * fig.dt_s), y = qpix(v);
    (open ? cairo_line_to : cairo_move_to)(cr, x, y);
    open = true;
  }
  cairo_stroke(cr);
  cairo_set_dash(cr, nullptr, 0, 0);
  if (n_points <= kMaxPoints) {
    for (std::size_t k = 0; k < fig.observed.size(); ++k) {
      const double v = fig.observed[k];
      if (!std::isfinite(v)) continue;
      cairo_new_sub_path(cr);
      cairo_arc(cr, ts.x(t0 + static_cast<double>(k) * fig.dt_s), qpix(v), 2.4, 0, 2 * M_PI);
    }
    setColour(cr, kObservedColour);
    cairo_fill(cr);
  }
  cairo_restore(cr);

  // Legend.
  double y = y0 + 58 + 10;
  const auto legend = [&](const std::string& label, Rgb colour, bool observed, double width = 2.0) {
    setColour(cr, colour);
    cairo_set_line_width(cr, observed ? 1.4 : width);
    if (observed) cairo_set_dash(cr, dash, 2, 0);
    cairo_move_to(cr, left, y - 4);
    cairo_line_to(cr, left + 26, y - 4);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
    if (observed) {
      cairo_arc(cr, left + 13, y - 4, 2.4, 0, 2 * M_PI);
      cairo_fill(cr);
    }
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, left + 34, y, label, 11.5);
    y += kLegendRow;
  };
  legend(fig.observed_label, kObservedColour, true);
  legend(fig.simulated_label, kSimulatedColour, false);
  if (!fig.earlier.empty()) legend(fig.earlier_label, kEarlierColour, false, 1.6);
  canvas.finish();
}

}  // namespace reachwise::report::detail
