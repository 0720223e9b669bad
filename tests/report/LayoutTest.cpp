// Figure geometry of the report (include/reachwise/report/Layout.hpp):
// time-axis labels stay inside the figure for spans from an hour to
// decades, with odd start times and offsets, measured with cairo's own text
// extents (the glyphs' ink, not the layout's estimate); tick times are
// checked with the C library's calendar (gmtime_r); map labels placed on a
// dense synthetic map never intersect, and a label is only ever left out
// for labels of higher priority.
#include <cairo.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <ctime>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "reachwise/report/Layout.hpp"

namespace {

using namespace reachwise::report::layout;

/// Text measured with cairo's toy text API and the system sans-serif font,
/// as the report's figures draw it.
class CairoText {
public:
  CairoText() : surface_(cairo_image_surface_create(CAIRO_FORMAT_ARGB32, 4, 4)), cr_(cairo_create(surface_)) {
    cairo_select_font_face(cr_, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  }
  ~CairoText() {
    cairo_destroy(cr_);
    cairo_surface_destroy(surface_);
  }
  CairoText(const CairoText&) = delete;
  CairoText& operator=(const CairoText&) = delete;
  cairo_text_extents_t extents(const std::string& text, double size) const {
    cairo_set_font_size(cr_, size);
    cairo_text_extents_t e;
    cairo_text_extents(cr_, text.c_str(), &e);
    return e;
  }
  MeasureText measure() const {
    return [this](std::string_view t, double size) { return extents(std::string(t), size).x_advance; };
  }

private:
  cairo_surface_t* surface_;
  cairo_t* cr_;
};

/// Civil date and time of unix second `t` in the offset, from the C library.
std::tm civil(double t, int offset_min) {
  const std::time_t s = static_cast<std::time_t>(std::llround(t + offset_min * 60.0));
  std::tm tm{};
  gmtime_r(&s, &tm);
  return tm;
}

struct Case {
  double t0, span_s;
  int offset_min;
  double x0, x1, width;  ///< plot ends and figure width (px)
};

constexpr double kHour = 3600, kDay = 86400;

std::vector<Case> cases() {
  // 2024-06-01T05:30:00Z, and starts off any whole step: 23:59:17 on the
  // last day of a leap February, and 00:00 of a New Year's Day.
  const double starts[] = {1717219800.0, 1709251157.0, 1704067200.0};
  const double spans[] = {kHour,        3 * kHour,   7.5 * kHour, kDay,         2.5 * kDay,
                          5 * kDay - kHour, 13 * kDay, 40 * kDay,   100 * kDay,  365 * kDay,
                          3 * 365 * kDay,   11 * 365 * kDay};
  const int offsets[] = {0, 60, -330, 345, -720, 840};
  // The report's panels (620 px, plot 64..602), a lake panel (plot 64..556)
  // with a wide value axis (plot from 120), a narrow figure, the timing chart.
  const double geometry[][3] = {{64, 602, 620}, {64, 556, 620}, {120, 602, 620}, {40, 290, 300}, {190, 840, 960}};
  std::vector<Case> out;
  for (const double t0 : starts)
    for (const double span : spans)
      for (const int off : offsets)
        for (const auto& g : geometry) out.push_back({t0, span, off, g[0], g[1], g[2]});
  return out;
}

TEST(TimeAxisLayout, EveryTickLabelLiesInsideTheFigure) {
  const CairoText text;
  for (const Case& c : cases()) {
    TimeAxisSpec s;
    s.t0 = c.t0, s.t1 = c.t0 + c.span_s, s.x0 = c.x0, s.x1 = c.x1, s.utc_offset_min = c.offset_min;
    s.y = 260, s.figure_x0 = 0, s.figure_x1 = c.width;
    const TimeAxisLayout axis = layoutTimeAxis(s, text.measure());
    const std::string what = "start " + std::to_string(c.t0) + ", span " + std::to_string(c.span_s / kHour) +
                             " h, offset " + std::to_string(c.offset_min) + " min, plot " + std::to_string(c.x0) +
                             ".." + std::to_string(c.x1);
    // A reader needs at least two labelled ticks to read a time off the axis.
    ASSERT_GE(axis.tick_x.size(), 2u) << what;
    ASSERT_GE(axis.labels.size(), 2u) << what;
    for (const double x : axis.tick_x) {
      EXPECT_GE(x, c.x0 - 1e-6) << what;
      EXPECT_LE(x, c.x1 + 1e-6) << what;
    }
    const Box figure{0, 0, c.width, 320};
    for (const AxisLabel& l : axis.labels) {
      // The box the layout reserved lies inside the figure...
      EXPECT_TRUE(l.box.inside(figure)) << what << ": '" << l.text << "' at " << l.box.x0 << ".." << l.box.x1;
      // ... and so does the ink cairo draws for the text there (its extents
      // from the glyphs, independent of the layout's own estimate).
      const cairo_text_extents_t e = text.extents(l.text, l.size);
      const double ink0 = l.x + e.x_bearing, ink1 = ink0 + e.width;
      EXPECT_GE(ink0, 0.0) << what << ": '" << l.text << "'";
      EXPECT_LE(ink1, c.width) << what << ": '" << l.text << "'";
      EXPECT_GE(l.baseline + e.y_bearing, s.y) << what << ": '" << l.text << "' reaches above the axis";
      EXPECT_LE(l.baseline + e.y_bearing + e.height, s.y + 40) << what << ": '" << l.text << "'";
    }
    // Labels of one row (one baseline) never run into each other.
    for (std::size_t a = 0; a < axis.labels.size(); ++a)
      for (std::size_t b = a + 1; b < axis.labels.size(); ++b)
        if (axis.labels[a].baseline == axis.labels[b].baseline) {
          EXPECT_FALSE(axis.labels[a].box.overlaps(axis.labels[b].box))
              << what << ": '" << axis.labels[a].text << "' and '" << axis.labels[b].text << "'";
        }
  }
}

// The run that showed its last date cut to "2024-06-": 2024-06-01 05:30 to
// 2024-06-06 04:30 UTC on a 620 px panel. The last day's tick is 34 px
// from the plot's right end and its date is about 55 px wide: it is now
// shifted inwards and shown whole.
TEST(TimeAxisLayout, TheLastDateOfAFiveDayRunIsShownWhole) {
  const CairoText text;
  TimeAxisSpec s;
  s.t0 = 1717219800.0, s.t1 = s.t0 + 119 * kHour, s.x0 = 64, s.x1 = 602, s.y = 260, s.figure_x1 = 620;
  const TimeAxisLayout axis = layoutTimeAxis(s, text.measure());
  std::vector<std::string> texts;
  for (const AxisLabel& l : axis.labels) texts.push_back(l.text);
  EXPECT_NE(std::find(texts.begin(), texts.end(), "2024-06-06"), texts.end());
  for (const std::string& t : texts) EXPECT_EQ(t.size(), 10u) << t << " is not a whole date";
}

TEST(TimeAxisLayout, TicksFallOnWholeLocalStepsAndLabelsNameThem) {
  const CairoText text;
  for (const Case& c : cases()) {
    if (c.x0 != 64 || c.x1 != 602) continue;
    TimeAxisSpec s;
    s.t0 = c.t0, s.t1 = c.t0 + c.span_s, s.x0 = c.x0, s.x1 = c.x1, s.utc_offset_min = c.offset_min;
    s.y = 260, s.figure_x1 = c.width;
    const TimeAxisLayout axis = layoutTimeAxis(s, text.measure());
    ASSERT_GE(axis.tick_x.size(), 2u);
    const double step_px = axis.tick_x[1] - axis.tick_x[0];
    const double step_s = step_px / (c.x1 - c.x0) * c.span_s;
    for (std::size_t k = 0; k < axis.tick_x.size(); ++k) {
      const double t = c.t0 + (axis.tick_x[k] - c.x0) / (c.x1 - c.x0) * c.span_s;
      const std::tm tm = civil(t, c.offset_min);
      // Every tick on a whole minute; from a day on, at local midnight;
      // beyond about a fortnight, on the first of a month (tolerance: the
      // round trip through pixels, well under a second).
      EXPECT_EQ(tm.tm_sec, 0) << t;
      if (step_s >= kDay - 60) {
        EXPECT_EQ(tm.tm_hour * 60 + tm.tm_min, 0) << t;
      }
      if (step_s >= 28 * kDay) {
        EXPECT_EQ(tm.tm_mday, 1) << t;
      }
    }
    // Every label is a local date (YYYY-MM-DD, YYYY-MM or YYYY) or clock
    // time (HH:MM) of one of the ticks.
    for (const AxisLabel& l : axis.labels) {
      bool found = false;
      for (const double x : axis.tick_x) {
        const double t = c.t0 + (x - c.x0) / (c.x1 - c.x0) * c.span_s;
        const std::tm tm = civil(std::round(t), c.offset_min);
        char date[16], month[16], year[8], clock[8];
        std::strftime(date, sizeof date, "%Y-%m-%d", &tm);
        std::strftime(month, sizeof month, "%Y-%m", &tm);
        std::strftime(year, sizeof year, "%Y", &tm);
        std::strftime(clock, sizeof clock, "%H:%M", &tm);
        found = found || l.text == date || l.text == month || l.text == year || l.text == clock;
      }
      EXPECT_TRUE(found) << "'" << l.text << "' names no tick";
    }
  }
}

// ---- map labels ----

struct Request {
  double x, y, w, h;
};

TEST(LabelPlacer, DenseMapLabelsNeverIntersectAndOnlyGiveWayToHigherPriority) {
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> ux(10, 590), uy(10, 390), uw(18, 80);
  const Box frame{0, 0, 600, 400};
  // Eight labels of the highest priority far apart on a grid, then 600
  // labels crowded at random over the same map.
  std::vector<Request> req;
  for (int k = 0; k < 8; ++k) req.push_back({75.0 + 150.0 * (k % 4), 100.0 + 200.0 * (k / 4), 60, 14});
  // (Kept clear of the eight's places right of their points, so that
  // their being kept does not depend on the draw.)
  while (req.size() < 608) {
    const Request r{ux(rng), uy(rng), uw(rng), 14};
    const bool clear = std::none_of(req.begin(), req.begin() + 8, [&](const Request& g) {
      return r.x + r.w + 20 > g.x && r.x - r.w - 20 < g.x + 80 && std::abs(r.y - g.y) < 30;
    });
    if (clear) req.push_back(r);
  }
  LabelPlacer placer(frame);
  std::vector<Box> symbols;
  for (const Request& r : req) symbols.push_back({r.x - 4, r.y - 4, r.x + 4, r.y + 4});
  for (const Box& b : symbols) placer.block(b);
  std::vector<std::optional<Box>> got;
  for (const Request& r : req) {
    const auto tries = pointLabelCandidates(r.x, r.y, r.w, r.h, 6);
    got.push_back(placer.place(tries));
  }
  std::size_t kept = 0;
  for (std::size_t i = 0; i < got.size(); ++i) {
    if (!got[i]) continue;
    ++kept;
    const Box& a = *got[i];
    EXPECT_TRUE(a.inside(frame)) << i;
    EXPECT_NEAR(a.x1 - a.x0, req[i].w, 1e-9) << i;
    // Near its own point: within the farthest candidate's reach.
    EXPECT_LE(std::max(std::abs((a.x0 + a.x1) / 2 - req[i].x), std::abs((a.y0 + a.y1) / 2 - req[i].y)),
              req[i].w / 2 + 6 * 2.2 + 2 + 1e-9)
        << i;
    for (std::size_t j = i + 1; j < got.size(); ++j)
      if (got[j]) {
        EXPECT_FALSE(a.overlaps(*got[j])) << "labels " << i << " and " << j << " intersect";
      }
    for (const Box& s : symbols) EXPECT_FALSE(a.overlaps(s)) << "label " << i << " covers a symbol";
  }
  // The highest-priority labels are all kept; the map is dense enough that
  // some labels are left out, and not so dense that most are.
  for (std::size_t i = 0; i < 8; ++i) EXPECT_TRUE(got[i].has_value()) << i;
  EXPECT_LT(kept, got.size());
  EXPECT_GT(kept, 8u + 50u);  // and many of the crowd too
  // A label left out had no free place: each of its candidates leaves the
  // frame, covers a symbol or covers a label of higher priority (earlier).
  for (std::size_t i = 0; i < got.size(); ++i) {
    if (got[i]) continue;
    for (const Box& c : pointLabelCandidates(req[i].x, req[i].y, req[i].w, req[i].h, 6)) {
      bool blocked = !c.inside(frame);
      for (const Box& s : symbols) blocked = blocked || c.overlaps(s);
      for (std::size_t j = 0; j < i; ++j) blocked = blocked || (got[j] && c.overlaps(*got[j]));
      EXPECT_TRUE(blocked) << "label " << i << " was left out though a place was free";
    }
  }
}

TEST(LabelPlacer, AlsoAvoidKeepsOneLabelOffTheGivenBoxesOnly) {
  LabelPlacer placer({0, 0, 200, 100});
  const Box lake{100, 40, 140, 60};
  const std::vector<Box> right = {{105, 45, 135, 55}, {20, 45, 50, 55}};
  const auto a = placer.place(right, std::span<const Box>(&lake, 1));
  ASSERT_TRUE(a.has_value());
  EXPECT_EQ(a->x0, 20);  // the first place covered the box to avoid
  const auto b = placer.place(std::vector<Box>{{105, 45, 135, 55}});
  ASSERT_TRUE(b.has_value());  // another label may go there
  EXPECT_EQ(b->x0, 105);
  EXPECT_FALSE(placer.place(std::vector<Box>{{110, 40, 150, 50}}).has_value());  // it covers b
  EXPECT_EQ(placer.placed().size(), 2u);
}

}  // namespace
