#pragma once
// What the report shows, decided once from the results: the units, the
// outlets and confluences drawn, the figure files written. The page and
// the figures both read it.

#include <cmath>
#include <cstdint>
#include <filesystem>
#include <set>
#include <string>
#include <vector>

#include "reachwise/report/Report.hpp"

namespace reachwise::report::detail {

/// Display units: SI, or US customary when the run's config is.
struct DisplayUnits {
  bool us = false;
  double q(double m3s) const;      ///< discharge in m³/s or cfs
  double len(double m) const;      ///< depth in m or ft
  double vel(double ms) const;     ///< velocity in m/s or ft/s
  double vol(double m3) const;     ///< volume in m³ or ft³
  const char* q_unit() const { return us ? "cfs" : "m³/s"; }
  const char* len_unit() const { return us ? "ft" : "m"; }
  const char* vel_unit() const { return us ? "ft/s" : "m/s"; }
  const char* vol_unit() const { return us ? "ft³" : "m³"; }
};

/// A figure file of the report and what it shows.
struct FigureFile {
  std::string file;      ///< name inside the report folder
  std::string caption;   ///< the figure's title (also drawn in the image)
  double width_px = 0;   ///< layout width (the HTML shows it at most this wide)
  /// What the figure shows and in which units, under the title.
  std::string note;
  double height_px = 0;  ///< layout height, where known
};

/// One routed lake's numbers, as the `lakes` layer of the GeoPackage
/// gives them (docs/formats.md, "Lakes and reservoirs").
struct LakeFacts {
  double inflow_peak_m3s = NAN, inflow_peak_t = NAN;    ///< interpolated between samples (unix s)
  double outflow_peak_m3s = NAN, outflow_peak_t = NAN;
  double attenuation_pct = NAN;                         ///< 100 (1 − outflow peak / inflow peak)
  double lag_h = NAN;                                   ///< outflow peak time − inflow peak time
  double peak_level_m = NAN, peak_level_t = NAN;        ///< the highest sample
};

struct ReportModel {
  DisplayUnits units;
  int utc_offset_min = 0;
  /// Confluence nodes (index into results.nodes) drawn as hydrographs, by
  /// combined peak, largest first; and those in the timing chart.
  std::vector<std::size_t> hydrograph_confluences, timing_confluences;
  /// Outlet reaches (plan index) drawn as hydrographs, by peak, largest first.
  std::vector<std::uint32_t> hydrograph_outlets;
  /// Every outlet (plan index) by peak, largest first, at most
  /// kOutletTableRows: the outlet table's rows.
  std::vector<std::uint32_t> ranked_outlets;
  std::size_t outlet_count = 0, confluence_count = 0, bifurcation_count = 0;
  /// Texts of the node labels the map could place ("O:<reach>" for an
  /// outlet, the node id for a confluence).
  std::set<std::string> map_labels;
  FigureFile map, timing;
  std::vector<FigureFile> outlet_figures, confluence_figures;
  /// The outlet (plan index) of each of outlet_figures.
  std::vector<std::uint32_t> outlet_figure_reaches;
  /// The reaches the user named (ReportSeries::named), in that order.
  std::vector<FigureFile> reach_figures;
  /// One entry per lake of ReportInputs::lakes; `shown_lakes` indexes them,
  /// largest inflow peak first (the table shows kLakeTableRows, the panels
  /// the first kShownLakes of them).
  std::vector<LakeFacts> lake_facts;
  std::vector<std::size_t> shown_lakes;
  std::vector<FigureFile> lake_figures;
  /// Indexes into ReportInputs::gauges, the worst KGE first (a KGE that
  /// cannot be formed last); the first kShownGauges have a panel.
  std::vector<std::size_t> shown_gauges;
  std::vector<FigureFile> gauge_figures;
};

/// Branch peaks closer than this count as coinciding (the report's rule).
inline constexpr double kCoincidenceS = 3600;
inline constexpr std::size_t kShownConfluences = 6;
inline constexpr std::size_t kTimingConfluences = 12;
inline constexpr std::size_t kShownOutlets = 12;
/// Outlets labelled on the map (by priority, where a place is free): all
/// of them up to this many, else only those with a panel.
inline constexpr std::size_t kLabelAllOutlets = 200;
inline constexpr std::size_t kOutletTableRows = 500;
inline constexpr std::size_t kTableRows = 10;
inline constexpr std::size_t kWorstVolumeRows = 5;
inline constexpr std::size_t kShownLakes = 12;
inline constexpr std::size_t kLakeTableRows = 50;
/// Lakes labelled on the map: all of them up to this many, else only those
/// with a panel.
inline constexpr std::size_t kLabelAllLakes = 50;
inline constexpr std::size_t kShownGauges = 12;
/// Gauges labelled on the map: all of them up to this many, else only
/// those with a panel.
inline constexpr std::size_t kLabelAllGauges = 50;

/// `YYYY-MM-DD HH:MM` in the run's offset, rounded to the minute; "-" for NaN.
std::string displayTime(double unix_s, int utc_offset_min);

/// Draws every figure into `folder` and fills `model`'s figure entries.
void drawFigures(const std::filesystem::path& folder, const ReportInputs& in, const ReportSeries& series,
                 ReportModel& model);

/// Writes `folder`/index.html.
void writePage(const std::filesystem::path& folder, const ReportInputs& in, const ReportModel& model);

}  // namespace reachwise::report::detail
