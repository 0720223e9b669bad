#pragma once
// The report's figures, drawn with cairo (SVG or PNG surfaces). Values
// arrive already converted to the unit they are labelled in.

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/report/Layout.hpp"

namespace reachwise::report::detail {

enum class ImageFormat { Svg, Png };

/// One figure file: a cairo surface and context, written by finish().
class Canvas {
public:
  Canvas(std::filesystem::path file, double width, double height, ImageFormat format);
  ~Canvas();
  Canvas(const Canvas&) = delete;
  Canvas& operator=(const Canvas&) = delete;

  cairo_t* cr() const noexcept { return cr_; }
  double width() const noexcept { return width_; }
  double height() const noexcept { return height_; }
  /// Writes the file; throws InputError naming it when cairo reports a fault.
  void finish();

private:
  [[noreturn]] void fail(cairo_status_t status) const;
  std::filesystem::path file_;
  double width_, height_;
  ImageFormat format_;
  cairo_surface_t* surface_ = nullptr;
  cairo_t* cr_ = nullptr;
};

struct Rgb {
  double r = 0, g = 0, b = 0;
};
void setColour(cairo_t* cr, Rgb c, double alpha = 1.0);

/// Sequential ramp, t in [0, 1] (light for small flows, dark for large).
Rgb rampColour(double t);
/// Distinct colours for the branches of a hydrograph.
Rgb seriesColour(std::size_t i);

enum class Align { Left, Centre, Right };
/// Text with its baseline at y (toy text API, the system sans font).
void drawText(cairo_t* cr, double x, double y, std::string_view text, double size, Align align = Align::Left,
              bool bold = false);
double textWidth(cairo_t* cr, std::string_view text, double size, bool bold = false);
/// A figure's title, bold, its baseline at y = 22 from x = 12: 14 px, or
/// smaller (down to 10 px) when that is too wide for the figure, cut with
/// "…" when even that is.
void drawTitle(cairo_t* cr, std::string_view text, double figure_width);
/// Text drawn over a white halo, readable on top of lines.
void drawHaloText(cairo_t* cr, double x, double y, std::string_view text, double size, bool bold = false,
                  Rgb colour = {0.1, 0.1, 0.1});

/// A "nice" tick step (1, 2 or 5 × 10^k) giving about `target` ticks over `span`.
double niceStep(double span, int target);
/// A short number for axis labels (no trailing zeros).
std::string tickLabel(double v, double step);

/// Linear time scale in pixels, labelled in the run's UTC offset.
struct TimeScale {
  double t0 = 0, t1 = 1;    ///< unix seconds at the left and right ends
  double x0 = 0, x1 = 1;    ///< pixels
  int utc_offset_min = 0;
  double x(double t) const { return x0 + (t - t0) / (t1 - t0) * (x1 - x0); }
};
/// Ticks and labels below the line y (layout::layoutTimeAxis: every label
/// within [0, figure_width]); grid lines up to y_top when y_top < y.
void drawTimeAxis(cairo_t* cr, const TimeScale& scale, double y, double y_top, double figure_width);
/// The widest value-axis label (tickLabel, 11 px) from lo to hi in `step`s.
double valueLabelWidth(cairo_t* cr, double lo, double hi, double step);
/// Left edge of a plot whose value labels are `label_width` wide, right of
/// a rotated axis title at x = 16: at least `least`.
inline double plotLeft(double label_width, double least = 64) { return std::max(least, 26 + label_width + 6); }
/// "UTC", "UTC+01:00", ...
std::string offsetName(int utc_offset_min);

// ---- map ----

struct MapLine {
  const std::vector<network::Point3>* line = nullptr;   ///< vertices in CRS units (not copied: networks can be huge)
  double value = NAN;       ///< peak discharge (display unit); NaN = none
};

struct MapMarker {
  enum class Kind { Confluence, MajorConfluence, Outlet, Bifurcation };
  double x = 0, y = 0;
  Kind kind = Kind::Confluence;
  std::string label;        ///< empty = no label
  /// Labels are placed in order of priority, highest first; a label with
  /// no free place is left out (layout::LabelPlacer).
  double priority = 0;
};

/// A lake's outline, filled; labelled with its id when `label` is set and
/// a place is free (lake labels give way to node labels, and to the
/// labels of lakes listed before them).
struct MapLake {
  const std::vector<std::vector<network::Point2>>* rings = nullptr;  ///< CRS units, even–odd rule (not copied)
  std::string label;
};

/// A gauge: a small triangle, labelled with its id when `label` is set and
/// a place is free (gauge labels give way to node labels, and to the
/// labels of gauges listed before them; lake labels give way to them).
struct MapGauge {
  double x = 0, y = 0;      ///< CRS units
  std::string label;
};

struct MapFigure {
  std::string title;        ///< drawn above the map
  std::vector<MapLine> lines;
  std::vector<MapMarker> markers;
  std::vector<MapLake> lakes;
  std::vector<MapGauge> gauges;
  std::string value_label;  ///< e.g. "peak discharge (m³/s)"
  /// Metres per CRS unit along x at the map's centre (for the scale bar);
  /// NaN when unknown (then the bar is labelled in CRS units).
  double metres_per_unit_x = NAN;
  double aspect_x = 1.0;    ///< x stretch (cos latitude for a geographic CRS)
  std::string crs_unit = "m";
  bool feet = false;        ///< scale bar in ft / mi
};

/// What drawMap drew: the figure's layout size (px) and the labels placed.
struct MapDrawn {
  double width = 0, height = 0;
  std::vector<std::string> labels;        ///< texts of the node labels drawn
  std::vector<layout::Box> label_boxes;   ///< every label drawn (nodes, gauges, lakes), in layout px
};

MapDrawn drawMap(const std::filesystem::path& file, const MapFigure& map, ImageFormat format);

// ---- hydrographs ----

struct Curve {
  std::string label;
  std::vector<double> q;    ///< one value per axis step (display unit)
  double peak_q = NAN, peak_t = NAN;
  Rgb colour;
  double line_width = 1.6;
  bool dashed = false;
};

/// A shaded band between two series (an ensemble's 10th to 90th
/// percentile), drawn behind the curves with a legend row of its own.
struct Band {
  std::string label;
  std::vector<double> lo, hi;   ///< one value per axis step (display unit)
  Rgb colour;
};

struct HydrographFigure {
  std::string title;
  std::vector<Curve> curves;
  std::vector<Band> bands;
  std::int64_t start_unix_s = 0;
  double dt_s = 3600;
  std::size_t steps = 0;    ///< samples on the axis (curves may be shorter: not captured)
  int utc_offset_min = 0;
  std::string q_unit;
};

void drawHydrograph(const std::filesystem::path& file, const HydrographFigure& fig);

/// Adds the polyline of series `q` (samples `dt` apart from `t0`) to the
/// current path; with more samples than pixel columns, the minimum and
/// maximum of each column (keeps every peak, bounds the file size).
void tracePath(cairo_t* cr, const std::vector<double>& q, const TimeScale& ts, double t0, double dt,
               const std::function<double(double)>& ypix);

// ---- lakes ----

/// One lake's panel: inflow and outflow on the left (discharge) axis, the
/// level on the right axis.
struct LakeFigure {
  std::string title;
  std::vector<double> inflow, outflow, level;   ///< one value per axis step (display units)
  double inflow_peak = NAN, inflow_peak_t = NAN;
  double outflow_peak = NAN, outflow_peak_t = NAN;
  double level_peak = NAN, level_peak_t = NAN;
  double crest_level = NAN;                     ///< a weir's crest (display unit), drawn when finite
  std::int64_t start_unix_s = 0;
  double dt_s = 3600;
  std::size_t steps = 0;
  int utc_offset_min = 0;
  std::string q_unit, len_unit;
};

void drawLakeChart(const std::filesystem::path& file, const LakeFigure& fig);

// ---- gauges ----

/// One gauge's panel: the observed discharge as points joined by a dashed
/// line (broken where an observation is missing) and the simulated
/// discharge as a line, both on one discharge axis.
struct GaugeFigure {
  std::string title;
  std::vector<double> observed, simulated;   ///< one value per axis step (display unit); NaN: none
  std::string observed_label, simulated_label;
  /// A second simulated series drawn under the first (e.g. before
  /// calibration); empty: none.
  std::vector<double> earlier;
  std::string earlier_label;
  std::int64_t start_unix_s = 0;
  double dt_s = 3600;
  std::size_t steps = 0;
  int utc_offset_min = 0;
  std::string q_unit;
};

void drawGaugeChart(const std::filesystem::path& file, const GaugeFigure& fig);

// ---- confluence timing ----

struct TimingBranch {
  std::string label;
  double peak_t = NAN, peak_q = NAN;
};

struct TimingRow {
  std::string label;                 ///< node id
  double combined_peak_t = NAN, combined_peak_q = NAN;
  std::vector<TimingBranch> branches;
  double spread_s = NAN;
};

struct TimingFigure {
  std::vector<TimingRow> rows;       ///< drawn top to bottom
  int utc_offset_min = 0;
  std::string q_unit;
  double coincidence_s = 3600;       ///< spreads within this are highlighted
};

void drawTiming(const std::filesystem::path& file, const TimingFigure& fig);

}  // namespace reachwise::report::detail
