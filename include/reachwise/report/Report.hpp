#pragma once
/// \file
/// The run report: one self-contained folder (index.html plus figure files
/// drawn with cairo) that a practitioner opens in any browser. It shows a
/// map of the network coloured by peak discharge (labels placed by
/// priority without overlap, report/Layout.hpp), a table of every outlet
/// and hydrographs at the largest outlets (in a grid, ranked by peak) and
/// at the confluences with the largest combined peaks, a chart
/// of how far apart the branch peaks of those confluences arrive, each
/// routed lake (its outline on the map, a panel with inflow, outflow and
/// level, a table of its peaks), each gauge compared with the run (a
/// symbol on the map, a panel of observed and simulated discharge, a table
/// of skill scores), and tables of the run, the top reaches
/// and the coinciding confluences.
///
/// Use: build a ReportSeries from the plan before routing, let it receive
/// the series (alone or through io::SeriesFanOut beside the GeoPackage
/// writer), then call writeReport() once the results are written.

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <mutex>
#include <span>
#include <string>
#include <unordered_map>
#include <vector>

#include "reachwise/io/CalibratedWriter.hpp"
#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {
class OutputCommit;
}

namespace reachwise::report {

/// Captures, while routing runs, the series the report draws: outlets, and
/// the incoming branches and the leaving reach of candidate confluences.
/// Memory stays bounded on huge networks: the reaches are chosen up front
/// from the plan (at most kMaxOutlets outlets and kMaxCandidateConfluences
/// confluences, those with the largest upstream networks); the report ranks
/// the captured confluences by combined peak flow after the run.
class ReportSeries final : public routing::SeriesSink {
public:
  static constexpr std::size_t kMaxOutlets = 48;
  static constexpr std::size_t kMaxCandidateConfluences = 40;

  /// `named`: reaches (plan indices) the user asked to see, each drawn in
  /// a panel of its own (`--report-reaches`), in that order.
  ReportSeries(const network::NetworkPlan& plan, const routing::TimeAxis& axis,
               std::vector<std::uint32_t> named = {});

  /// Keeps `q_m3s` of a chosen reach (ignores the others and the depth and
  /// velocity series). Thread-safe.
  void write(std::uint32_t reach, std::span<const double> q_m3s, std::span<const double> depth_m,
             std::span<const double> velocity_ms) override;
  /// True for the chosen reaches only.
  bool wants(std::uint32_t reach) const override { return q_.count(reach) != 0; }

  /// Plan indices of the outlets whose series are captured (largest
  /// upstream network first).
  const std::vector<std::uint32_t>& outlets() const noexcept { return outlets_; }
  /// Plan indices of the reaches that leave the candidate confluences (the
  /// confluence is the node at the top of that reach, `N:<reach_id>`).
  const std::vector<std::uint32_t>& confluences() const noexcept { return confluences_; }
  /// The reaches the user named, in the order given.
  const std::vector<std::uint32_t>& named() const noexcept { return named_; }
  /// Number of outlets in the plan (may exceed outlets().size()).
  std::size_t outletCount() const noexcept { return outlet_count_; }

  /// The captured outflow series of `reach` (plan index), empty when the
  /// reach was not chosen or never written.
  std::span<const double> series(std::uint32_t reach) const;
  /// True when the series of `reach` is captured (chosen and written).
  bool has(std::uint32_t reach) const;

  const routing::TimeAxis& axis() const noexcept { return axis_; }
  const network::NetworkPlan& plan() const noexcept { return plan_; }

private:
  const network::NetworkPlan& plan_;
  routing::TimeAxis axis_;
  std::vector<std::uint32_t> outlets_, confluences_, named_;
  std::size_t outlet_count_ = 0;
  std::unordered_map<std::uint32_t, std::vector<double>> q_;   ///< chosen reaches; filled by write()
  std::vector<bool> written_;                                  ///< by plan index of a chosen reach
  mutable std::mutex mutex_;
};

/// What a calibration changed, for the report of the calibrated run
/// (`reachwise calibrate --report`): the fitted sub-basins and every
/// gauge's scores and simulated outflow before calibration.
struct CalibrationComparison {
  std::string what;                       ///< what the multiplier scales, e.g. "Manning's n"
  std::vector<io::CalibrationRow> rows;   ///< one per fitted sub-basin, upstream first
  std::vector<std::string> left_out;      ///< gauges not fitted, with the reason
  /// Per gauge id (as ReportInputs::gauges name them): the whole network's
  /// scores and outflow (m^3/s, one value per axis step) before calibration.
  std::vector<std::string> gauge_ids;
  std::vector<gauges::SkillScores> before;
  std::vector<std::vector<double>> outflow_before;
};

/// An ensemble run's members, for the report: at the outlets, the band
/// the members' outflow spans (10th to 90th percentile at each step) and
/// its median, drawn behind the reference member's outflow.
struct ReportEnsemble {
  std::size_t members = 0;
  std::string reference;              ///< the member whose results the rest of the report shows
  struct Band {
    std::uint32_t reach = 0;          ///< plan index
    std::vector<double> p10, p50, p90;  ///< m^3/s, one per axis step
  };
  std::vector<Band> bands;
  /// The band of `reach`, or nullptr.
  const Band* band(std::uint32_t reach) const {
    for (const Band& b : bands)
      if (b.reach == reach) return &b;
    return nullptr;
  }
};

struct ReportInputs {
  const network::ReachTable& table;      ///< attributes + geometry as the reader gives them
  const network::NetworkPlan& plan;
  const routing::NetworkResults& results;
  const io::RunInfo& info;               ///< include/reachwise/io/ResultsWriter.hpp
  std::string gpkg_path;                 ///< the GeoPackage written by the same run (shown as text)
  bool us_units = false;                 ///< label and convert to cfs / ft (the run's config is US customary)
  /// Above this many reaches the map is a PNG instead of an SVG (an SVG of
  /// a million lines would be too heavy for a browser).
  std::size_t svg_map_max_reaches = 20000;
  /// The routed lakes (run::routedLakes; empty: none): each lake's outline
  /// (in the network's CRS) and id, the reach its outflow enters, and its
  /// inflow, outflow and level series, one value per axis step. An empty
  /// `outflow_reach` is shown as a terminal lake.
  std::vector<io::LakeOutput> lakes = {};
  /// The gauges compared with the run (run::RouteSummary::gauges; empty:
  /// none), as the GeoPackage's `gauges` layer gives them: id, reach, place
  /// (network CRS), skill scores, and the observed (NaN: missing) and
  /// simulated series, one value per axis step. The series must outlive
  /// writeReport().
  std::vector<io::GaugeOutput> gauges = {};
  /// The calibration this run comes from (null: none): a section comparing
  /// the gauges' scores before and after, and the outflow before
  /// calibration in each gauge's panel. Must outlive writeReport().
  const CalibrationComparison* calibration = nullptr;
  /// An ensemble run's member band at the outlets (null: a single run).
  /// Must outlive writeReport().
  const ReportEnsemble* ensemble = nullptr;
};

/// Name of the marker file every report folder holds; writeReport() only
/// ever replaces a folder that has it (or an empty one).
inline constexpr const char* kReportMarker = ".reachwise-report";

/// Writes DIR/index.html and the figure files (SVG through cairo's SVG
/// surface; the map as PNG for large networks) into DIR, a folder of its
/// own (e.g. OUT/report; never a folder holding other outputs).
///
/// Builds the report in a temporary folder beside DIR and renames it onto
/// DIR on success. An existing DIR is refused (InputError naming it) unless
/// `overwrite`; even then a non-empty folder without the kReportMarker file
/// is refused, so that other files are never deleted. Missing parent
/// folders are created. Throws InputError naming the file for any file
/// that cannot be written, InternalError when `series` was built for
/// another plan. With `into`, the finished temporary folder is handed to
/// it (put in place with the run's other outputs) instead of renamed.
void writeReport(const std::filesystem::path& dir, const ReportInputs& in, const ReportSeries& series,
                 bool overwrite, io::OutputCommit* into = nullptr);

}  // namespace reachwise::report
