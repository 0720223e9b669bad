#pragma once
/// \file
/// Geometry of the run report's figures that needs no drawing surface:
/// where a time axis puts its ticks and labels so that no label leaves the
/// figure, and where map labels go so that none covers another. Text is
/// measured by a function the caller passes (the figures measure with
/// cairo); everything is in layout pixels, y growing downwards.

#include <functional>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace reachwise::report::layout {

/// An axis-aligned rectangle in pixels (x0 ≤ x1, y0 ≤ y1).
struct Box {
  double x0 = 0, y0 = 0, x1 = 0, y1 = 0;
  /// True when the interiors intersect (touching edges do not).
  bool overlaps(const Box& o) const noexcept { return x0 < o.x1 && o.x0 < x1 && y0 < o.y1 && o.y0 < y1; }
  /// True when this box lies within `frame` (edges may touch).
  bool inside(const Box& frame) const noexcept {
    return x0 >= frame.x0 && x1 <= frame.x1 && y0 >= frame.y0 && y1 <= frame.y1;
  }
};

/// Advance width in pixels of `text` at font size `size` (px).
using MeasureText = std::function<double(std::string_view text, double size)>;

/// The box a line of text covers when its left end is at x and its
/// baseline at y: from 0.8 size above the baseline to 0.25 size below
/// (ascent and descent of a sans-serif font, rounded up; common practice).
Box textBox(double x, double baseline, double width, double size);

/// What a time axis spans and where its labels may go.
struct TimeAxisSpec {
  double t0 = 0, t1 = 1;        ///< unix seconds at x0 and x1 (t1 > t0)
  double x0 = 0, x1 = 1;        ///< pixels of the plot's left and right ends
  int utc_offset_min = 0;       ///< labels in this offset
  double y = 0;                 ///< the axis line; labels below it
  double figure_x0 = 0, figure_x1 = 1;  ///< every label stays within these
};

/// One label of an axis: its text, left end, baseline and size, and the
/// box it covers (textBox).
struct AxisLabel {
  std::string text;
  double x = 0, baseline = 0, size = 11;
  Box box;
};

struct TimeAxisLayout {
  std::vector<double> tick_x;     ///< ticks (and grid lines), pixels
  std::vector<AxisLabel> labels;  ///< every label to draw
};

/// Ticks at whole local steps a reader counts in (minutes, hours, days,
/// weeks, months, years), as many as fit about 75 px apart. Below a day
/// each tick reads HH:MM with the date under the first tick and under
/// each tick of a new day; from a day the date (YYYY-MM-DD), from a month
/// YYYY-MM, from a year YYYY. A label is centred under its tick and
/// shifted inwards where it would leave [figure_x0, figure_x1]; a label
/// that would then run into the one before it on its row is left out.
TimeAxisLayout layoutTimeAxis(const TimeAxisSpec& spec, const MeasureText& measure);

/// Where a label of `width` × `height` px may go around a point symbol at
/// (x, y) whose half-size is `gap`: right, left, above, below, the four
/// diagonals, then the same a little further out; in that order of
/// preference (common cartographic practice: right of the point first).
std::vector<Box> pointLabelCandidates(double x, double y, double width, double height, double gap);

/// Greedy label placement: labels are offered in order of priority
/// (highest first); each takes the first of its candidate boxes that lies
/// inside the frame and overlaps no obstacle and no label taken before,
/// and is left out when none does. A label offered earlier is never
/// displaced by a later one.
class LabelPlacer {
public:
  explicit LabelPlacer(Box frame) : frame_(frame) {}
  /// Something labels must not cover (a symbol, the north arrow).
  void block(const Box& b) { obstacles_.push_back(b); }
  /// The first fitting candidate, which is then taken; nullopt when none
  /// fits. `also_avoid`: boxes this label alone must not cover.
  std::optional<Box> place(std::span<const Box> candidates, std::span<const Box> also_avoid = {});
  /// The labels taken, in the order offered.
  const std::vector<Box>& placed() const noexcept { return placed_; }
  const Box& frame() const noexcept { return frame_; }

private:
  Box frame_;
  std::vector<Box> obstacles_, placed_;
};

}  // namespace reachwise::report::layout
