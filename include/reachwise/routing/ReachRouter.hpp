#pragma once
/// \file
/// Routing one reach: a top inflow hydrograph (and lateral inflow along the
/// reach) in, the outflow hydrograph out, with the numerics chosen per reach
/// and a volume balance. See docs/methods.md.

#include <cmath>
#include <limits>
#include <optional>
#include <span>
#include <vector>

#include "reachwise/hydraulics/RatingTable.hpp"
#include "reachwise/hydraulics/Section.hpp"
#include "reachwise/routing/Muskingum.hpp"
#include "reachwise/routing/Results.hpp"

namespace reachwise::routing {


enum class Scheme {
  ThreePoint,  ///< the conservative cell: storage Δx [X A(I) + (1 − X) A(O)] balanced
               ///< exactly, X at each time level's inflow (docs/methods.md §4; Todini 2007)
  FourPoint,   ///< discharge form, reference flow from Q[j,n], Q[j,n+1], Q[j+1,n]
               ///< and Q[j+1,n+1], iterated (Ponce & Chaganti 1994); not conservative
};

/// What the router needs to know about a reach.
struct ReachSpec {
  hydraulics::Section section;
  double length_m = 0;
  double muskingum_k_s = std::numeric_limits<double>::quiet_NaN();  ///< `muskingum` only
  double muskingum_x = std::numeric_limits<double>::quiet_NaN();
};

/// The default RouteOptions::grid_spread_budget, chosen on the 100k-reach
/// synthetic network (docs/methods.md §4, "Coarser grids on quick
/// reaches"): 0.001 halves the cells and moves no outlet hydrograph's
/// centroid by more than 10 minutes; 0.003 and 0.01 cost fewer cells
/// still but moved centroids by up to half an hour.
inline constexpr double kGridSpreadBudget = 0.001;
/// The largest budget the command line and run file take: 0.1 already
/// lets a grid spread a wave by a tenth of the distance it moves while it
/// rises, far beyond any budget measured (docs/methods.md §4).
inline constexpr double kMaxGridSpreadBudget = 0.1;

struct RouteOptions {
  Method method = Method::VariableParameter;
  Scheme scheme = Scheme::ThreePoint;
  std::uint32_t subreaches = 0;   ///< 0 = choose automatically
  std::uint32_t substeps = 0;     ///< 0 = choose automatically
  /// Reference flow for the grid (and the `mc` parameters); NaN = the rule
  /// Q_ref = Q_base + (Q_peak − Q_base)/2 of the total inflow (top + lateral).
  double reference_q_m3s = std::numeric_limits<double>::quiet_NaN();
  int four_point_iterations = 3;
  /// Rating-table nodes per segment for a table spanning five decades of Q;
  /// the router builds its table over the reach's own flow range and gives
  /// a narrower table proportionally fewer nodes (the same spacing, at
  /// least 16).
  std::size_t table_nodes = 64;
  /// `vpmc` reads c and T from a rating table; false solves normal depth in
  /// every cell instead with the discharge-form three-point cell (slow; for
  /// checks of the table and benchmarks; not the conservative cell).
  bool use_rating_table = true;
  /// `vpmc` routes a reach whose Ponce number (ReachNumerics::ponce_number)
  /// is below this with the diffusion wave instead (`diffusion`), where the
  /// Muskingum–Cunge methods cannot follow the flood (docs/methods.md,
  /// "Where the diffusion wave fails"); 0 never does. A pipe above its
  /// capacity is routed with `vpmc` whatever the method (the diffusion
  /// wave has no surcharge model).
  double diffusion_below_ponce = kDiffusionWaveMinPonce;
  GridLimits limits;
  /// `vpmc` on reaches the wave crosses in about a sub-step: how much more
  /// than the reference grid's the cell's diffusion length may exceed the
  /// channel's, as a fraction of c t_rise (the distance the wave moves while
  /// it rises), for a cheaper grid (docs/methods.md §4, "Coarser grids on
  /// quick reaches"); 0 keeps the grid of the reference flow.
  double grid_spread_budget = kGridSpreadBudget;
};

/// A reach's state at the end of a run, for a later run to start from
/// (docs/formats.md, "Saved state"): the flows at its section ends and the
/// numerics that computed them. A run started from it routes the reach
/// with these numerics (method, grid, reference flow, rating-table range)
/// rather than choosing them from its own inflow, so that it continues
/// exactly where the earlier run stopped.
struct ReachState {
  /// The method that routed the reach (ReachNumerics::method); `diffusion`
  /// has no saved state (its state is a depth profile on a grid of its own).
  Method method = Method::VariableParameter;
  std::uint32_t subreaches = 0;  ///< 0: a dry reach (no flows kept; a later run starts it steady)
  std::uint32_t substeps = 0;
  double reference_q_m3s = std::numeric_limits<double>::quiet_NaN();
  /// `vpmc`'s rating table: its flow range and nodes (0 nodes: no table).
  double table_min_q_m3s = std::numeric_limits<double>::quiet_NaN();
  double table_max_q_m3s = std::numeric_limits<double>::quiet_NaN();
  std::uint32_t table_nodes = 0;
  /// Flows at the subreaches + 1 section ends, top to bottom (m^3/s).
  std::vector<double> q_m3s;
  double storage_m3 = 0;  ///< the reach's storage for these flows (informative)
};

/// Output of routing one reach on the forcing's time axis.
struct ReachRun {
  ReachNumerics numerics;
  VolumeBalance volume;
  double inflow_peak_m3s = 0;    ///< of top + lateral inflow
  double inflow_peak_index = 0;  ///< fractional sample
  double rise_s = 0;             ///< rise time of the total inflow's peak
};

/// Routes reaches one after another; keeps its work buffers between calls
/// so a network run does not allocate per reach. Not thread-safe: use one
/// per thread.
class ReachRouter {
public:
  /// `inflow_m3s[n]` enters at the top, `lateral_m3s[n]` (empty = none) is
  /// the total lateral inflow along the reach, both on steps of `dt_s`.
  /// Writes the outflow into `outflow_m3s` (resized to the inflow's length).
  /// The reach starts in the steady state of the first sample. Throws
  /// InvalidParameter for a bad reach, step or negative/NaN inflow.
  ///
  /// With `start` (a saved ReachState with subreaches > 0), the reach
  /// starts from its flows instead, routed with its numerics; its first
  /// outflow sample is the state's last flow. InvalidParameter("state")
  /// for a state the reach cannot take (a diffusion-wave state, a flow
  /// count that is not subreaches + 1, a flow negative or not finite).
  ReachRun route(const ReachSpec& reach, std::span<const double> inflow_m3s,
                 std::span<const double> lateral_m3s, double dt_s, const RouteOptions& options,
                 std::vector<double>& outflow_m3s, const ReachState* start = nullptr);

  /// The state at the end of the last route (ReachState), from its run's
  /// numerics; a dry reach (nothing routed) gives subreaches 0.
  ReachState endState(const ReachRun& run) const;

  /// The rating table the last `vpmc` route used (for depth and velocity of
  /// its outflow); nullopt after other methods.
  const std::optional<hydraulics::RatingTable>& lastTable() const { return table_; }

private:
  std::vector<double> q_;      // flows at the m+1 section ends, current time
  std::vector<double> total_;  // inflow + lateral, for the reference flow rule
  bool routed_ = false;        // the last route ran a method (not a dry reach)
  double table_lo_ = 0, table_hi_ = 0;  // the last vpmc table's range and nodes
  std::uint32_t table_nodes_ = 0;
  double storage_end_ = 0;
  std::optional<hydraulics::RatingTable> table_;
  std::optional<hydraulics::RatingTable> spare_;  // the last table's storage, rebuilt in place
};

/// VolumeBalance::event_error_pct from the balance's volumes and base_m3.
double eventErrorPct(const VolumeBalance& v);

/// Depth and velocity of uniform flow at discharge `q_m3s`, through the
/// table when given, else by direct solve.
void depthAndVelocityAt(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                        double q_m3s, double& depth_m, double& velocity_ms);

/// The same for each discharge of `q_m3s`.
void depthAndVelocity(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                      std::span<const double> q_m3s, std::vector<double>& depth_m,
                      std::vector<double>& velocity_ms);

}  // namespace reachwise::routing
