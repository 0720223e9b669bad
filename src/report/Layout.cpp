// Figure geometry without a drawing surface: time-axis ticks and labels
// kept inside the figure, greedy placement of map labels.
#include "reachwise/report/Layout.hpp"

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>

#include "reachwise/io/IsoTime.hpp"

namespace reachwise::report::layout {

namespace {

constexpr double kDay = 86400;
constexpr double kClockSize = 11, kDateSize = 10.5;
constexpr double kRow1 = 16, kRow2 = 30;  // baselines below the axis line
constexpr double kLabelGap = 4;           // least space between two labels of a row

enum class Unit { Seconds, Months };

struct Step {
  Unit unit;
  double amount;   ///< seconds, or months
  double approx_s; ///< its length in seconds (a month as 30.44 days)
};

// Steps a reader counts in: minutes, hours, days, weeks, months, years.
constexpr std::array<Step, 27> kSteps = {{
    {Unit::Seconds, 60, 60},           {Unit::Seconds, 120, 120},           {Unit::Seconds, 300, 300},
    {Unit::Seconds, 600, 600},         {Unit::Seconds, 900, 900},           {Unit::Seconds, 1800, 1800},
    {Unit::Seconds, 3600, 3600},       {Unit::Seconds, 7200, 7200},         {Unit::Seconds, 10800, 10800},
    {Unit::Seconds, 21600, 21600},     {Unit::Seconds, 43200, 43200},       {Unit::Seconds, kDay, kDay},
    {Unit::Seconds, 2 * kDay, 2 * kDay}, {Unit::Seconds, 4 * kDay, 4 * kDay}, {Unit::Seconds, 7 * kDay, 7 * kDay},
    {Unit::Seconds, 14 * kDay, 14 * kDay}, {Unit::Months, 1, 30.44 * kDay}, {Unit::Months, 2, 60.9 * kDay},
    {Unit::Months, 3, 91.3 * kDay},    {Unit::Months, 6, 182.6 * kDay},     {Unit::Months, 12, 365.25 * kDay},
    {Unit::Months, 24, 730.5 * kDay},  {Unit::Months, 60, 1826 * kDay},     {Unit::Months, 120, 3652 * kDay},
    {Unit::Months, 240, 7305 * kDay},  {Unit::Months, 600, 18262 * kDay},   {Unit::Months, 1200, 36525 * kDay},
}};

/// Tick times (unix s) at whole local steps within [t0, t1].
std::vector<double> tickTimes(const Step& step, double t0, double t1, int utc_offset_min) {
  const double offset_s = utc_offset_min * 60.0;
  std::vector<double> out;
  if (step.unit == Unit::Seconds) {
    for (double t = std::ceil((t0 + offset_s) / step.amount) * step.amount - offset_s; t <= t1 + 1e-6;
         t += step.amount)
      out.push_back(t);
    return out;
  }
  // Months: the first of a month (local midnight) whose index from year 0
  // is a multiple of the step; the civil calendar from std::chrono.
  using namespace std::chrono;
  const double local0 = t0 + offset_s;
  const auto d0 = sys_days{days{static_cast<long>(std::floor(local0 / kDay))}};
  const year_month_day ymd{d0};
  long index = static_cast<int>(ymd.year()) * 12L + static_cast<long>(static_cast<unsigned>(ymd.month())) - 1;
  const auto monthStart = [&](long i) {
    const year_month_day first{year{static_cast<int>(i / 12)}, month{static_cast<unsigned>(i % 12 + 1)}, day{1}};
    return static_cast<double>(sys_days{first}.time_since_epoch().count()) * kDay - offset_s;
  };
  if (monthStart(index) < t0 - 1e-6) ++index;
  const long k = static_cast<long>(step.amount);
  index = (index + k - 1) / k * k;
  for (double t = monthStart(index); t <= t1 + 1e-6; index += k, t = monthStart(index)) out.push_back(t);
  return out;
}

/// Adds a label centred at x on its row, shifted inside [lo, hi]; left
/// out when it would run into the last label kept on that row.
void addLabel(TimeAxisLayout& out, double& row_right, std::string text, double x, double baseline, double size,
              double lo, double hi, const MeasureText& measure) {
  const double w = measure(text, size);
  double left = x - w / 2;
  if (left + w > hi) left = hi - w;
  if (left < lo) left = lo;
  if (left + w > hi) return;  // wider than the figure: nothing can show it whole
  if (left < row_right + kLabelGap) return;
  row_right = left + w;
  AxisLabel l;
  l.text = std::move(text);
  l.x = left;
  l.baseline = baseline;
  l.size = size;
  l.box = textBox(left, baseline, w, size);
  out.labels.push_back(std::move(l));
}

}  // namespace

Box textBox(double x, double baseline, double width, double size) {
  return {x, baseline - 0.8 * size, x + width, baseline + 0.25 * size};
}

TimeAxisLayout layoutTimeAxis(const TimeAxisSpec& s, const MeasureText& measure) {
  TimeAxisLayout out;
  const double span = s.t1 - s.t0;
  if (!(span > 0) || !(s.x1 > s.x0)) return out;
  // Ticks about 75 px apart, more when a date label is wider than that.
  const double spacing = std::max(75.0, measure("0000-00-00", kDateSize) + 14);
  const double max_ticks = std::max(2.0, (s.x1 - s.x0) / spacing);
  std::size_t chosen = kSteps.size() - 1;
  for (std::size_t k = 0; k < kSteps.size(); ++k)
    if (span / kSteps[k].approx_s <= max_ticks) {
      chosen = k;
      break;
    }
  // A long step may leave a single tick in the span (a week over 13 days):
  // then the next shorter one (its labels thinned below where they crowd).
  std::vector<double> ticks = tickTimes(kSteps[chosen], s.t0, s.t1, s.utc_offset_min);
  while (ticks.size() < 2 && chosen > 0) ticks = tickTimes(kSteps[--chosen], s.t0, s.t1, s.utc_offset_min);
  const Step* step = &kSteps[chosen];
  if (ticks.empty()) ticks.push_back(s.t0);  // a span shorter than a minute
  const double lo = s.figure_x0 + 1, hi = s.figure_x1 - 1;
  const auto xOf = [&](double t) { return s.x0 + (t - s.t0) / span * (s.x1 - s.x0); };
  double row1 = -INFINITY, row2 = -INFINITY;
  std::string last_date;
  for (const double t : ticks) {
    const double x = xOf(t);
    out.tick_x.push_back(x);
    const std::string iso = io::formatIsoTime(t, s.utc_offset_min, 0);
    const std::string date = iso.substr(0, 10), clock = iso.substr(11, 5);
    if (step->unit == Unit::Months) {
      const std::string text = step->amount >= 12 ? iso.substr(0, 4) : iso.substr(0, 7);
      addLabel(out, row1, text, x, s.y + kRow1, kDateSize, lo, hi, measure);
    } else if (step->amount >= kDay) {
      addLabel(out, row1, date, x, s.y + kRow1, kDateSize, lo, hi, measure);  // a clock would read 00:00
    } else {
      addLabel(out, row1, clock, x, s.y + kRow1, kClockSize, lo, hi, measure);
      if (date != last_date) {
        const std::size_t before = out.labels.size();
        addLabel(out, row2, date, x, s.y + kRow2, kDateSize, lo, hi, measure);
        if (out.labels.size() > before) last_date = date;
      }
    }
  }
  return out;
}

std::vector<Box> pointLabelCandidates(double x, double y, double w, double h, double gap) {
  std::vector<Box> out;
  out.reserve(16);
  for (const double g : {gap, gap * 2.2 + 2}) {
    out.push_back({x + g, y - h / 2, x + g + w, y + h / 2});          // right
    out.push_back({x - g - w, y - h / 2, x - g, y + h / 2});          // left
    out.push_back({x - w / 2, y - g - h, x + w / 2, y - g});          // above
    out.push_back({x - w / 2, y + g, x + w / 2, y + g + h});          // below
    out.push_back({x + g * 0.7, y - g * 0.7 - h, x + g * 0.7 + w, y - g * 0.7});  // above right
    out.push_back({x + g * 0.7, y + g * 0.7, x + g * 0.7 + w, y + g * 0.7 + h});  // below right
    out.push_back({x - g * 0.7 - w, y - g * 0.7 - h, x - g * 0.7, y - g * 0.7});  // above left
    out.push_back({x - g * 0.7 - w, y + g * 0.7, x - g * 0.7, y + g * 0.7 + h});  // below left
  }
  return out;
}

std::optional<Box> LabelPlacer::place(std::span<const Box> candidates, std::span<const Box> also_avoid) {
  for (const Box& b : candidates) {
    if (!b.inside(frame_)) continue;
    const auto hits = [&](const Box& o) { return o.overlaps(b); };
    if (std::any_of(obstacles_.begin(), obstacles_.end(), hits) ||
        std::any_of(placed_.begin(), placed_.end(), hits) || std::any_of(also_avoid.begin(), also_avoid.end(), hits))
      continue;
    placed_.push_back(b);
    return b;
  }
  return std::nullopt;
}

}  // namespace reachwise::report::layout
