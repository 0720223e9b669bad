// Confluence timing: one row per confluence, a bar from the earliest to the
// latest branch peak, a circle per branch peak (area by its flow) and a
// diamond at the combined peak. Bars of branch peaks within the coincidence
// window are highlighted: there the floods add up.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <utility>
#include <vector>

#include "Figures.hpp"

namespace reachwise::report::detail {

namespace {

constexpr double kWidth = 960, kLeft = 190, kRight = 120, kTop = 80, kRow = 48;
constexpr Rgb kCoincident{0.84, 0.37, 0.0};
constexpr Rgb kApart{0.55, 0.62, 0.70};

void diamond(cairo_t* cr, double x, double y, double r) {
  cairo_move_to(cr, x, y - r);
  cairo_line_to(cr, x + r, y);
  cairo_line_to(cr, x, y + r);
  cairo_line_to(cr, x - r, y);
  cairo_close_path(cr);
}

void drawLegend(cairo_t* cr, const TimingFigure& fig) {
  double x = kLeft;
  const double y = 46;
  cairo_set_line_width(cr, 1);
  cairo_arc(cr, x + 6, y - 4, 5, 0, 2 * M_PI);
  setColour(cr, seriesColour(1));
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
  cairo_stroke(cr);
  drawText(cr, x + 16, y, "branch peak (area by its flow)", 11.5);
  x += 16 + textWidth(cr, "branch peak (area by its flow)", 11.5) + 24;
  diamond(cr, x + 6, y - 4, 6);
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  cairo_fill(cr);
  drawText(cr, x + 16, y, "combined peak", 11.5);
  x += 16 + textWidth(cr, "combined peak", 11.5) + 24;
  setColour(cr, kCoincident, 0.55);
  cairo_rectangle(cr, x, y - 9, 26, 10);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  const std::string within = fmt::format("branch peaks within {:g} h", fig.coincidence_s / 3600);
  drawText(cr, x + 32, y, within, 11.5);
  x += 32 + textWidth(cr, within, 11.5) + 24;
  setColour(cr, kApart, 0.55);
  cairo_rectangle(cr, x, y - 9, 26, 10);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, x + 32, y, "further apart", 11.5);
}

}  // namespace

void drawTiming(const std::filesystem::path& file, const TimingFigure& fig) {
  const double plot_h = kRow * static_cast<double>(std::max<std::size_t>(1, fig.rows.size()));
  Canvas canvas(file, kWidth, kTop + plot_h + 56, ImageFormat::Svg);
  cairo_t* cr = canvas.cr();

  double t0 = INFINITY, t1 = -INFINITY, q_max = 0;
  for (const TimingRow& r : fig.rows) {
    for (const TimingBranch& b : r.branches)
      if (std::isfinite(b.peak_t)) {
        t0 = std::min(t0, b.peak_t), t1 = std::max(t1, b.peak_t);
        if (std::isfinite(b.peak_q)) q_max = std::max(q_max, b.peak_q);
      }
    if (std::isfinite(r.combined_peak_t)) t0 = std::min(t0, r.combined_peak_t), t1 = std::max(t1, r.combined_peak_t);
  }
  if (!(t1 >= t0)) t0 = 0, t1 = 3600;
  const double pad = std::max(1800.0, 0.08 * (t1 - t0));
  const TimeScale ts{t0 - pad, t1 + pad, kLeft, kWidth - kRight, fig.utc_offset_min};
  const double y_axis = kTop + plot_h;

  drawTitle(cr, fmt::format("Branch peak times at the {} confluences with the largest combined peaks",
                            fig.rows.size()), kWidth);
  drawLegend(cr, fig);
  for (std::size_t i = 0; i < fig.rows.size(); ++i) {
    const double y_top = kTop + kRow * static_cast<double>(i);
    if (i % 2 == 0) {
      cairo_set_source_rgb(cr, 0.965, 0.965, 0.965);
      cairo_rectangle(cr, 0, y_top, kWidth, kRow);
      cairo_fill(cr);
    }
  }
  drawTimeAxis(cr, ts, y_axis, kTop, kWidth);
  cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
  cairo_set_line_width(cr, 1);
  cairo_move_to(cr, kLeft, y_axis + 0.5);
  cairo_line_to(cr, kWidth - kRight, y_axis + 0.5);
  cairo_stroke(cr);
  drawText(cr, (kLeft + kWidth - kRight) / 2, y_axis + 48, "time of peak (" + offsetName(fig.utc_offset_min) + ")",
           11, Align::Centre);

  for (std::size_t i = 0; i < fig.rows.size(); ++i) {
    const TimingRow& r = fig.rows[i];
    const double yc = kTop + kRow * (static_cast<double>(i) + 0.5) + 3;
    const bool close = r.spread_s <= fig.coincidence_s;
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    drawText(cr, 12, yc - 3, r.label, 12.5, Align::Left, true);
    cairo_set_source_rgb(cr, 0.35, 0.35, 0.35);
    drawText(cr, 12, yc + 11, fmt::format("combined peak {:.1f} {}", r.combined_peak_q, fig.q_unit), 10.5);
    setColour(cr, close ? kCoincident : Rgb{0.2, 0.2, 0.2});
    drawText(cr, kWidth - kRight + 14, yc + 4,
             std::isfinite(r.spread_s) ? fmt::format("spread {:.1f} h", r.spread_s / 3600) : std::string("spread -"),
             12, Align::Left, close);

    double lo = INFINITY, hi = -INFINITY;
    for (const TimingBranch& b : r.branches)
      if (std::isfinite(b.peak_t)) lo = std::min(lo, b.peak_t), hi = std::max(hi, b.peak_t);
    if (hi >= lo) {
      setColour(cr, close ? kCoincident : kApart, 0.55);
      const double x0 = ts.x(lo), x1 = std::max(ts.x(hi), x0 + 2);
      cairo_rectangle(cr, x0, yc - 5, x1 - x0, 10);
      cairo_fill(cr);
    }
    // Branch circles, then their ids above (or below) them where they do
    // not run into another id of the row.
    std::vector<std::pair<double, double>> above, below;
    for (std::size_t k = 0; k < r.branches.size(); ++k) {
      const TimingBranch& b = r.branches[k];
      if (!std::isfinite(b.peak_t)) continue;
      const double share = q_max > 0 && std::isfinite(b.peak_q) ? std::max(0.0, b.peak_q) / q_max : 0;
      const double radius = 2.5 + 7.5 * std::sqrt(share);  // area by flow
      const double x = ts.x(b.peak_t);
      cairo_arc(cr, x, yc, radius, 0, 2 * M_PI);
      setColour(cr, seriesColour(k + 1), 0.85);
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
      cairo_set_line_width(cr, 1);
      cairo_stroke(cr);
      const double w = textWidth(cr, b.label, 10);
      const std::pair<double, double> span{x - w / 2 - 2, x + w / 2 + 2};
      const auto clear = [&](const auto& list) {
        return std::none_of(list.begin(), list.end(),
                            [&](const auto& o) { return span.first < o.second && o.first < span.second; });
      };
      cairo_set_source_rgb(cr, 0.25, 0.25, 0.25);
      if (clear(above)) {
        drawText(cr, x, yc - 12.5, b.label, 10, Align::Centre);
        above.push_back(span);
      } else if (clear(below)) {
        drawText(cr, x, yc + 19.5, b.label, 10, Align::Centre);
        below.push_back(span);
      }
    }
    if (std::isfinite(r.combined_peak_t)) {
      diamond(cr, ts.x(r.combined_peak_t), yc, 6);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      cairo_fill_preserve(cr);
      cairo_set_source_rgb(cr, 1, 1, 1);
      cairo_stroke(cr);
    }
  }
  if (fig.rows.empty()) {
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    drawText(cr, kWidth / 2, kTop + kRow / 2 + 4, "the network has no confluences", 13, Align::Centre);
  }
  canvas.finish();
}

}  // namespace reachwise::report::detail
