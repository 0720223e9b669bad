#pragma once
/// \file
/// Calibration against gauges (`reachwise calibrate`): a multiplier per
/// gauged sub-basin on Manning's n (or on the bottom width), chosen by a
/// bounded derivative-free optimiser so that the routed outflow at the
/// gauge best matches the observed one (docs/methods.md, "Calibration").
///
/// Sub-basins are calibrated from upstream to downstream: a gauge's
/// sub-basin is every reach upstream of it (its own reach included) that
/// no gauge above it already holds, and its multiplier is chosen with the
/// multipliers above it fixed at their calibrated values. Reaches below
/// every gauge keep their roughness (multiplier 1).
///
/// Each evaluation routes the sub-basin alone (network::PlanPart), with
/// the calibrated outflow of the sub-basins above handed in at its
/// boundary; sub-basins that do not depend on each other are fitted at
/// the same time. A sub-basin that cannot be cut out on its own (a lake
/// with outflowing reaches both inside and outside it) is routed with the
/// whole network after every sub-basin above it. The result does not
/// depend on the number of threads.

#include <cstddef>
#include <functional>
#include <limits>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/gauges/Skill.hpp"
#include "reachwise/io/CalibratedWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/run/Forcing.hpp"
#include "reachwise/run/Gauges.hpp"
#include "reachwise/run/Network.hpp"

namespace reachwise::io {
class OutputCommit;
}

namespace reachwise::run {

/// What a sub-basin's fit varies: a multiplier on Manning's n, on the
/// bottom width, or (with the muskingum method) a multiplier on K and X
/// itself, X in [0, 0.5], the same for every reach of the sub-basin.
enum class CalibrationParameter { Roughness, Width, MuskingumKX };
enum class Objective { Kge, Nse, PeakWeightedNse };

/// `n` / `width` / `kx`; `kge` / `nse` / `nse_peak`.
std::string_view parameterName(CalibrationParameter p);
std::string_view objectiveName(Objective o);
/// The objective's score (higher is better, 1 is a perfect fit).
double objectiveScore(Objective o, const gauges::SkillScores& s);

struct CalibrationSettings {
  CalibrationParameter parameter = CalibrationParameter::Roughness;
  double lower = 0.5, upper = 2.0;      ///< bounds of the multiplier, 0 < lower < upper
  Objective objective = Objective::Kge;
  std::size_t max_evaluations = 60;     ///< routings per sub-basin
  double tolerance = 1e-3;              ///< relative change of the multiplier at which to stop
  /// Fewer observations than this in the run leave a gauge out (its reaches
  /// go to the gauge below).
  std::size_t min_observations = 10;
};

struct CalibrateRequest {
  NetworkSource network;
  ForcingFiles forcing;
  GaugeFiles gauges;
  routing::Method method = routing::Method::VariableParameter;
  double diffusion_below_ponce = routing::kDiffusionWaveMinPonce;
  double grid_spread_budget = routing::kGridSpreadBudget;   ///< RouteRequest::grid_spread_budget
  unsigned threads = 0;
  CalibrationSettings settings;
  /// Told of each sub-basin when done (one call at a time, from any
  /// thread; sub-basins fitted side by side in the order they finish);
  /// may be empty.
  std::function<void(const struct SubBasinResult&)> on_sub_basin;
  /// Told after every routing (one call at a time, from any thread):
  /// routings so far and the most the run may take (sub-basins ×
  /// (max_evaluations + 2) + 2); may be empty.
  std::function<void(std::size_t done, std::size_t most)> on_routing;
};

struct SubBasinResult {
  std::string gauge_id, reach_id;
  std::vector<std::uint32_t> reaches;   ///< plan indices of the sub-basin
  double multiplier = 1;                ///< on n, width or Muskingum K
  double muskingum_x = std::numeric_limits<double>::quiet_NaN();  ///< the fitted X (kx only)
  gauges::SkillScores before, after;    ///< at multiplier 1 (upstream calibrated) and at the result
  std::size_t evaluations = 0;
  bool at_bound = false;                ///< the result lies on a bound (within the tolerance)
};

struct CalibrationResult {
  std::unique_ptr<LoadedNetwork> network;
  network::NetworkPlan plan;            ///< sections as calibrated
  routing::TimeAxis axis;
  BoundGauges gauges;
  std::vector<SubBasinResult> sub_basins;   ///< upstream first
  std::vector<double> multiplier;           ///< per plan reach; 1 where not calibrated
  std::vector<double> muskingum_x;          ///< per plan reach, the fitted X; NaN where not fitted
  std::vector<gauges::SkillScores> scores;  ///< every gauge, routed with every multiplier
  std::vector<gauges::SkillScores> scores_before;  ///< every gauge, routed before calibration
  /// Every gauge's simulated outflow (m^3/s, on `axis`), before and after
  /// calibration, in the order of `gauges.gauges`.
  std::vector<std::vector<double>> outflow_before, outflow_after;
  std::vector<std::string> left_out;        ///< gauges not calibrated, with the reason
  std::size_t uncalibrated_reaches = 0;     ///< reaches below every calibrated gauge
  std::size_t evaluations = 0;
};

/// Calibrates. Throws as run::route for bad input, InputError naming the
/// observed file when no gauge has enough observations, and
/// InvalidParameter for bad settings.
CalibrationResult calibrate(const CalibrateRequest& request);

/// One row per fitted sub-basin, upstream first, as the `calibration`
/// table holds them.
std::vector<io::CalibrationRow> calibrationRows(const CalibrationResult& result, const CalibrationSettings& settings);

/// Writes the calibrated network to `path` (io::writeCalibratedGeoPackage):
/// every reach with its attributes, Manning's n (or bottom width) times its
/// sub-basin's multiplier (`manning_n_source` / `bottom_width_source`
/// "calibrated" where it changed), the `calibration` table and the
/// `gauges` layer. Throws InputError naming `path` when it exists without
/// `overwrite` or cannot be written; nothing is left behind then.
/// With `into`, the finished file is handed to it (put in place with the
/// run file).
void writeCalibrated(const std::string& path, bool overwrite, const CalibrationResult& result,
                     const CalibrationSettings& settings, io::OutputCommit* into = nullptr);

/// The sub-basins of gauges at `gauge_reaches` (plan indices, any order):
/// for each, in plan (upstream-first) order, the reaches upstream of it not
/// held by a gauge above. Two gauges on one reach share it (the second gets
/// an empty sub-basin).
std::vector<std::vector<std::uint32_t>> subBasins(const network::NetworkPlan& plan,
                                                  const std::vector<std::uint32_t>& gauge_reaches);

}  // namespace reachwise::run
