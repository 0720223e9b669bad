// Drawing helpers shared by the report's figures: the cairo surface of one
// file, colours, text, axis ticks and the time axis.
#include <cairo-svg.h>
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>

#include "Figures.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/report/Layout.hpp"

namespace reachwise::report::detail {

namespace {

constexpr double kPngScale = 2.0;  // PNG pixels per layout unit, sharp on high-density screens
constexpr const char* kFont = "sans-serif";

}  // namespace

Canvas::Canvas(std::filesystem::path file, double width, double height, ImageFormat format)
    : file_(std::move(file)), width_(width), height_(height), format_(format) {
  if (format_ == ImageFormat::Svg) {
    surface_ = cairo_svg_surface_create(file_.c_str(), width, height);
    if (cairo_surface_status(surface_) == CAIRO_STATUS_SUCCESS)
      cairo_svg_surface_set_document_unit(surface_, CAIRO_SVG_UNIT_PX);
  } else {
    surface_ = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, static_cast<int>(std::ceil(width * kPngScale)),
                                          static_cast<int>(std::ceil(height * kPngScale)));
  }
  const cairo_status_t status = cairo_surface_status(surface_);
  if (status != CAIRO_STATUS_SUCCESS) {
    cairo_surface_destroy(surface_);
    surface_ = nullptr;
    fail(status);
  }
  cr_ = cairo_create(surface_);
  if (format_ == ImageFormat::Png) cairo_scale(cr_, kPngScale, kPngScale);
  // White background: the figures must read the same in any page colour.
  cairo_set_source_rgb(cr_, 1, 1, 1);
  cairo_paint(cr_);
  cairo_select_font_face(cr_, kFont, CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
}

Canvas::~Canvas() {
  if (cr_) cairo_destroy(cr_);
  if (surface_) cairo_surface_destroy(surface_);
}

void Canvas::finish() {
  cairo_status_t status = cairo_status(cr_);
  if (status != CAIRO_STATUS_SUCCESS) fail(status);
  cairo_destroy(cr_);
  cr_ = nullptr;
  if (format_ == ImageFormat::Png) {
    cairo_surface_flush(surface_);
    status = cairo_surface_write_to_png(surface_, file_.c_str());
  } else {
    cairo_surface_finish(surface_);  // the SVG surface writes its file here
    status = cairo_surface_status(surface_);
  }
  cairo_surface_destroy(surface_);
  surface_ = nullptr;
  if (status != CAIRO_STATUS_SUCCESS) fail(status);
}

void Canvas::fail(cairo_status_t status) const {
  InputLocation at;
  at.file = file_.string();
  throw InputError(at, std::string("cannot draw the report figure: ") + cairo_status_to_string(status));
}

void setColour(cairo_t* cr, Rgb c, double alpha) { cairo_set_source_rgba(cr, c.r, c.g, c.b, alpha); }

Rgb rampColour(double t) {
  // ColorBrewer "YlGnBu" (Harrower & Brewer 2003, The Cartographic Journal
  // 40(1)), its five darker classes, hex values from memory: the palest
  // classes are left out so that small streams stay visible on white.
  static constexpr std::array<Rgb, 5> stops = {{{0xa1 / 255.0, 0xda / 255.0, 0xb4 / 255.0},
                                                {0x41 / 255.0, 0xb6 / 255.0, 0xc4 / 255.0},
                                                {0x2c / 255.0, 0x7f / 255.0, 0xb8 / 255.0},
                                                {0x25 / 255.0, 0x34 / 255.0, 0x94 / 255.0},
                                                {0x08 / 255.0, 0x1d / 255.0, 0x58 / 255.0}}};
  if (!std::isfinite(t)) return {0.6, 0.6, 0.6};
  t = std::clamp(t, 0.0, 1.0) * (stops.size() - 1);
  const std::size_t k = std::min<std::size_t>(static_cast<std::size_t>(t), stops.size() - 2);
  const double f = t - static_cast<double>(k);
  const Rgb a = stops[k], b = stops[k + 1];
  return {a.r + f * (b.r - a.r), a.g + f * (b.g - a.g), a.b + f * (b.b - a.b)};
}

Rgb seriesColour(std::size_t i) {
  // Okabe & Ito (2008) colour-blind-safe qualitative palette, values from memory.
  static constexpr std::array<Rgb, 7> colours = {{{0.902, 0.624, 0.000},
                                                  {0.337, 0.706, 0.914},
                                                  {0.000, 0.620, 0.451},
                                                  {0.800, 0.475, 0.655},
                                                  {0.835, 0.369, 0.000},
                                                  {0.000, 0.447, 0.698},
                                                  {0.941, 0.894, 0.259}}};
  return colours[i % colours.size()];
}

namespace {

void selectFont(cairo_t* cr, double size, bool bold) {
  cairo_select_font_face(cr, kFont, CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size);
}

double alignedX(cairo_t* cr, double x, std::string_view text, double size, Align align, bool bold) {
  if (align == Align::Left) return x;
  const double w = textWidth(cr, text, size, bold);
  return align == Align::Centre ? x - w / 2 : x - w;
}

}  // namespace

double textWidth(cairo_t* cr, std::string_view text, double size, bool bold) {
  selectFont(cr, size, bold);
  const std::string s(text);
  cairo_text_extents_t ext;
  cairo_text_extents(cr, s.c_str(), &ext);
  return ext.x_advance;
}

void drawText(cairo_t* cr, double x, double y, std::string_view text, double size, Align align, bool bold) {
  const double left = alignedX(cr, x, text, size, align, bold);
  selectFont(cr, size, bold);
  const std::string s(text);
  cairo_move_to(cr, left, y);
  cairo_show_text(cr, s.c_str());
  cairo_new_path(cr);
}

void drawTitle(cairo_t* cr, std::string_view text, double figure_width) {
  const double room = figure_width - 24;
  double size = 14;
  while (size > 10 && textWidth(cr, text, size, true) > room) size -= 0.5;
  std::string s(text);
  if (textWidth(cr, s, size, true) > room) {
    // Cut at a character boundary (UTF-8 continuation bytes are 10xxxxxx).
    while (!s.empty() && textWidth(cr, s + "\u2026", size, true) > room) {
      while (!s.empty() && (static_cast<unsigned char>(s.back()) & 0xC0) == 0x80) s.pop_back();
      if (!s.empty()) s.pop_back();  // the character's first byte
    }
    s += "\u2026";
  }
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  drawText(cr, 12, 22, s, size, Align::Left, true);
}

void drawHaloText(cairo_t* cr, double x, double y, std::string_view text, double size, bool bold, Rgb colour) {
  selectFont(cr, size, bold);
  const std::string s(text);
  cairo_save(cr);
  cairo_move_to(cr, x, y);
  cairo_text_path(cr, s.c_str());
  cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
  cairo_set_line_width(cr, 3.0);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  cairo_stroke(cr);
  cairo_restore(cr);
  setColour(cr, colour);
  cairo_move_to(cr, x, y);
  cairo_show_text(cr, s.c_str());
  cairo_new_path(cr);
}

double niceStep(double span, int target) {
  // "Nice numbers for graph labels", Heckbert, Graphics Gems (1990).
  if (!(span > 0) || !std::isfinite(span)) return 1.0;
  const double raw = span / std::max(1, target);
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  const double f = raw / mag;
  const double nice = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  return nice * mag;
}

std::string tickLabel(double v, double step) {
  if (std::abs(v) < step * 1e-9) v = 0;
  const int digits = step >= 1 ? 0 : static_cast<int>(std::ceil(-std::log10(step) - 1e-9));
  return fmt::format("{:.{}f}", v, std::max(0, digits));
}

std::string offsetName(int utc_offset_min) {
  if (utc_offset_min == 0) return "UTC";
  const int a = std::abs(utc_offset_min);
  return fmt::format("UTC{}{:02d}:{:02d}", utc_offset_min < 0 ? '-' : '+', a / 60, a % 60);
}

void drawTimeAxis(cairo_t* cr, const TimeScale& s, double y, double y_top, double figure_width) {
  layout::TimeAxisSpec spec;
  spec.t0 = s.t0, spec.t1 = s.t1, spec.x0 = s.x0, spec.x1 = s.x1;
  spec.utc_offset_min = s.utc_offset_min;
  spec.y = y;
  spec.figure_x0 = 0, spec.figure_x1 = figure_width;
  const layout::TimeAxisLayout axis =
      layout::layoutTimeAxis(spec, [&](std::string_view text, double size) { return textWidth(cr, text, size); });
  cairo_set_line_width(cr, 1.0);
  for (const double tx : axis.tick_x) {
    const double x = std::round(tx) + 0.5;
    if (y_top < y) {
      cairo_set_source_rgb(cr, 0.9, 0.9, 0.9);
      cairo_move_to(cr, x, y_top);
      cairo_line_to(cr, x, y);
      cairo_stroke(cr);
    }
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    cairo_move_to(cr, x, y);
    cairo_line_to(cr, x, y + 4);
    cairo_stroke(cr);
  }
  for (const layout::AxisLabel& l : axis.labels) drawText(cr, l.x, l.baseline, l.text, l.size);
}

double valueLabelWidth(cairo_t* cr, double lo, double hi, double step) {
  double w = 0;
  for (double v = lo; v <= hi + step * 1e-6; v += step) w = std::max(w, textWidth(cr, tickLabel(v, step), 11));
  return w;
}

}  // namespace reachwise::report::detail
