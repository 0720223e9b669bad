#pragma once
/// \file
/// Level-pool routing of a lake or reservoir: a horizontal water surface,
/// storage a function of level, outflow a function of level (or storage),
/// and continuity dS/dt = I − O(S).
///
/// The step is the storage-indication method, also called modified Puls
/// (Puls 1928; Chow, Maidment & Mays 1988, *Applied Hydrology* §8.2):
/// continuity averaged over the step (the trapezoidal rule),
///
///     2 S(n+1)/Δt + O(n+1) = I(n) + I(n+1) + 2 S(n)/Δt − O(n),
///
/// solved for S(n+1). See docs/methods.md, "Lakes and reservoirs".
///
/// Arguments are checked when a lake is built; a bad one throws
/// InvalidParameter naming the quantity (`area_m2`, `level_storage`,
/// `crest_level_m`, `weir_length_m`, `weir_coefficient`, `level_outflow`,
/// `storage_outflow`, `k_h`, `outflow_rule`, `dt`, `inflow`,
/// `initial_level_m`).

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace reachwise::routing {

/// Broad-crested weir coefficient in SI units (m^0.5/s) for
/// O = C L (h − h_c)^1.5: critical depth over a broad crest is 2/3 of the
/// head, so q = √g (2/3 H)^1.5 = (2/3)^1.5 √g H^1.5, C = 1.705 (a textbook
/// derivation, e.g. Chow 1959 *Open-Channel Hydraulics* §15; the value from
/// memory). Sharp-crested weirs are nearer 1.8 (from memory).
inline constexpr double kBroadCrestedWeirCoefficient = 1.7049;

/// Level–storage relation: storage S (m^3) above the level at which the
/// lake is taken as empty.
class LevelStorage {
public:
  /// Vertical sides: S = A (h − bottom), A the surface area (m^2, > 0).
  static LevelStorage prismatic(double area_m2, double bottom_level_m);
  /// Piecewise linear through (level, storage) points: levels strictly
  /// increasing, storage strictly increasing and starting at 0 (the empty
  /// lake's level). Above the last point the last segment's area continues.
  static LevelStorage table(std::vector<double> level_m, std::vector<double> storage_m3);

  double storage(double level_m) const;  ///< levels below the bottom give 0
  double level(double storage_m3) const;
  /// Surface area dS/dh (m^2) just above `level_m`.
  double area(double level_m) const;
  double bottomLevel() const { return level_.front(); }
  /// Storages (m^3) of the relation's points, where the area may change.
  const std::vector<double>& storageKnots() const { return storage_; }

private:
  LevelStorage() = default;
  std::vector<double> level_, storage_;  // one segment (two points) for prismatic
};

/// Outflow rule. Exactly one of the forms is set.
struct OutflowRule {
  enum class Kind { None, Weir, LevelTable, StorageTable, Linear };
  Kind kind = Kind::None;
  // Weir or spillway: O = C L (h − h_c)^1.5 above the crest, 0 below.
  double crest_level_m = 0, weir_length_m = 0, weir_coefficient = kBroadCrestedWeirCoefficient;
  // Tables, piecewise linear, outflow non-decreasing, first outflow 0; above
  // the last point the last segment's slope continues.
  std::vector<double> x, outflow_m3s;  // x = level (m) or storage (m^3)
  // Linear reservoir O = S / k.
  double k_s = 0;

  static OutflowRule weir(double crest_level_m, double length_m,
                          double coefficient = kBroadCrestedWeirCoefficient);
  static OutflowRule levelTable(std::vector<double> level_m, std::vector<double> outflow_m3s);
  static OutflowRule storageTable(std::vector<double> storage_m3, std::vector<double> outflow_m3s);
  static OutflowRule linear(double k_s);
};

/// Options of the routing.
struct LevelPoolOptions {
  /// Sub-step h at most this fraction of the lake's shortest response time
  /// dS/dO over the storages the run can reach. The trapezoidal rule damps
  /// a mode of time constant τ by (1 − h/2τ)/(1 + h/2τ) per step h, which
  /// turns negative (the outflow rings) for h > 2τ; h ≤ τ keeps it ≥ 1/3.
  double max_step_over_response = 1.0;
  std::size_t max_substeps = 1u << 16;  ///< per step of the series
  /// Initial level (m); unset: the level whose outflow equals the first inflow.
  std::optional<double> initial_level_m;
  /// Initial storage (m^3), e.g. from a saved state; wins over
  /// `initial_level_m`.
  std::optional<double> initial_storage_m3 = std::nullopt;
  /// Sub-steps per step, e.g. a saved state's (the grid of the run that
  /// saved it); 0: chosen as route() describes.
  std::size_t substeps = 0;
};

/// Routed series, one value per inflow sample, and the step's totals.
struct LevelPoolResult {
  std::vector<double> outflow_m3s, level_m, storage_m3;
  double volume_in_m3 = 0;    ///< ∫ I dt, inflow linear between samples
  double volume_out_m3 = 0;   ///< ∫ O dt over the sub-steps actually taken
  double storage_change_m3 = 0;
  double volume_error_m3 = 0;  ///< in − out − ΔS
  /// Sub-steps per step of the series, the same for the whole run (see
  /// LevelPool::route), and the shortest response time (s) they resolve.
  std::size_t substeps = 1;
  double response_time_min_s = 0;
  std::size_t steps_refined = 0;       ///< steps halved further (storage would have gone below 0)
  std::size_t samples_above_table = 0; ///< samples above a table's last point
};

/// A lake: level–storage relation and outflow rule, checked on construction.
class LevelPool {
public:
  /// `name` (e.g. "lake 7") begins each message. Throws InvalidParameter
  /// for a rule of kind None (`outflow_rule`), non-finite or non-positive
  /// sizes, tables not increasing in x or with decreasing outflow, and an
  /// outflow above 0 at the empty lake (a crest below the bottom level, a
  /// table whose first outflow is not 0).
  LevelPool(LevelStorage storage, OutflowRule rule, std::string name = {});

  double outflowAtStorage(double storage_m3) const;
  /// dO/dS (1/s) just above `storage_m3`.
  double outflowSlope(double storage_m3) const;
  /// Response time dS/dO (s) just above `storage_m3` (infinite where the
  /// outflow is flat, e.g. at or below a weir crest).
  double responseTime(double storage_m3) const;
  /// The largest storage whose outflow does not exceed `outflow_m3s`: the
  /// steady state passing that flow (a lake full to its crest for 0).
  /// Throws InvalidParameter("initial_level_m") where no level passes it.
  double steadyStorage(double outflow_m3s) const;

  const LevelStorage& levelStorage() const { return storage_; }
  const OutflowRule& rule() const { return rule_; }

  /// Shortest response time dS/dO (s) over storages [0, s_max].
  double shortestResponseTime(double s_max) const;

  /// Routes `inflow` (m^3/s, samples Δt apart, linear between them).
  /// Every step is split into the same k sub-steps, k the least with
  /// Δt/k <= max_step_over_response · τ_min, τ_min the shortest response
  /// time over the storages the run can reach: up to the larger of the
  /// initial storage and the steady storage of the largest inflow (a
  /// monotone step keeps the lake below it), and never above the initial
  /// storage plus the inflow volume. One grid for the whole run keeps the
  /// routing monotone in the inflow among runs with the same largest
  /// inflow (a larger one may take a finer grid).
  LevelPoolResult route(const std::vector<double>& inflow_m3s, double dt_s,
                        const LevelPoolOptions& options = {}) const;

private:
  double outflowAtLevel(double level_m) const;
  bool aboveTable(double storage_m3) const;
  LevelStorage storage_;
  OutflowRule rule_;
  std::string name_;
};

}  // namespace reachwise::routing
