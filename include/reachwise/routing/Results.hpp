#pragma once
/// \file
/// What a network run produces: per-reach summaries (peaks, timing,
/// volumes, the numerics chosen), per-node confluence analysis, and
/// hydrograph series streamed to a sink as each reach is finished.

#include <cstdint>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::routing {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Why a reach had cells with X < 0 raised to 0 (D > 1 taken as 1): the
/// first of these that applies (docs/methods.md, "Diagnostics").
enum class XClampCause : std::uint8_t {
  None,       ///< no cell was clamped
  Surcharge,  ///< a pipe carried more than its capacity in some cell
  BankFull,   ///< a two-stage section whose inflow range crosses the bank-full flow
  Short,      ///< the wave crosses the whole reach within one time step (c Δt >= L)
  Flat,       ///< D > 1 + C at the reference flow: the reach is shorter than Q / (T S0 c) − c Δt
  FlowRange,  ///< D > 1 + C only at flows away from the reference flow
};

/// Its name in outputs: "surcharge", "bank_full", "short", "flat",
/// "flow_range"; "" for None.
const char* xClampCauseName(XClampCause cause);


/// The routing methods (names in outputs: run::methodName).
enum class Method {
  VariableParameter,  ///< `vpmc`: c, T, C, D recomputed in every cell (Ponce & Yevjevich 1978)
  ConstantParameter,  ///< `mc`: one reference flow per reach for the whole event (Cunge 1969)
  Muskingum,          ///< `muskingum`: the reach's own K and X (McCarthy 1938)
  DiffusionWave,      ///< `diffusion`: the zero-inertia equations solved implicitly (docs/methods.md §6)
};

/// A method's name in outputs, on the command line and in run files:
/// "vpmc", "mc", "muskingum", "diffusion".
const char* methodName(Method method);

/// The Ponce number below which the diffusion-wave approximation fails
/// (Ponce, Li & Simons 1978, *J. Hydraulics Div. ASCE* 104: 30 for the
/// diffusion wave, 171 for the kinematic; from memory).
inline constexpr double kDiffusionWaveMinPonce = 30.0;

/// Numerics chosen for one reach (and what happened while routing it).
struct ReachNumerics {
  std::uint32_t subreaches = 1;     ///< sub-reach count (Δx = L / subreaches)
  std::uint32_t substeps = 1;       ///< internal sub-steps per output step
  double dx_m = kNaN;
  double dt_sub_s = kNaN;
  double reference_q_m3s = kNaN;    ///< flow the grid (and, for `mc`, the parameters) were set at
  double celerity_ms = kNaN;        ///< at the reference flow
  double courant = kNaN;            ///< C = c Δt_sub / Δx at the reference flow
  double cell_reynolds = kNaN;      ///< D = Q / (T S0 c Δx) at the reference flow
  double x = kNaN;                  ///< Muskingum X at the reference flow
  double k_s = kNaN;                ///< Muskingum K of one sub-reach, s
  double amplitude_ratio = kNaN;    ///< Ponce's convergence ratio R1
  double phase_ratio = kNaN;        ///< Ponce's convergence ratio R2
  /// Ponce, Li & Simons (1978) T_w S0 (g / d)^(1/2) for the event's wave
  /// (period T_w = 2 t_rise) at the mean depth d = A/T of uniform flow at
  /// the reference flow. Below kDiffusionWaveMinPonce the diffusion wave may
  /// not hold, and the Cunge methods measured far off the references
  /// (docs/methods.md, "Where the diffusion wave fails").
  double ponce_number = kNaN;
  /// The method that routed the reach: the one asked for, or `diffusion`
  /// where `vpmc` handed a flat reach over (RouteOptions::diffusion_below_ponce).
  Method method = Method::VariableParameter;
  std::uint64_t negative_clamps = 0;   ///< cells where a negative flow was clamped to 0
  std::uint64_t x_clamps = 0;          ///< cells where D > 1 + C was lowered to 1 + C (X raised to −C/2)
  std::uint64_t surcharge_cells = 0;   ///< cells above a pipe's capacity
  XClampCause x_clamp_cause = XClampCause::None;   ///< when x_clamps > 0
  /// Output samples outside the inflow envelope [lowest top inflow + lowest
  /// lateral inflow, highest top + highest lateral] by more than 1 % of its
  /// width (the rise): dips ahead of a wave, overshoots of the peak.
  std::uint64_t envelope_exceedances = 0;
  /// The farthest any output sample lies outside that envelope, % of the
  /// rise; 0 inside it, NaN when the inflow does not vary.
  double envelope_excursion_pct = kNaN;
  bool grid_compromise = false;     ///< no (subreaches, substeps) met every bound; the closest was used
  /// The reach continued a saved state (ReachState) and its inflow rose
  /// above twice the saved reference flow, so above any flow the saving run
  /// saw (its peak is at most twice its reference flow, Q_ref being halfway
  /// from base to peak): it is routed with numerics chosen for lower flows
  /// (docs/formats.md, "Saved state"). Not for `muskingum`, whose numerics
  /// do not depend on the flow.
  bool above_saved_flows = false;
};

/// Volume accounting of one reach over the run (m^3).
struct VolumeBalance {
  double inflow_m3 = 0;            ///< through the top of the reach
  /// Of inflow_m3, what the forcing's point inflow brought (the rest came
  /// from upstream reaches). For a network: all point inflow.
  double point_inflow_m3 = 0;
  /// Network only: volume gained (+) or lost (−) where reaches hand their
  /// outflow on. A reach's outflow volume counts every sub-step; the reach
  /// below sees that outflow at the output steps only (linear in between),
  /// so a hydrograph curved within a step arrives with a slightly different
  /// volume. Part of the network's error E.
  double handover_m3 = 0;
  double lateral_m3 = 0;           ///< along the reach
  double outflow_m3 = 0;           ///< through the bottom
  double storage_change_m3 = 0;    ///< storage at the end minus at the start
  /// 100 (in + lateral − out − Δstorage) / (in + lateral); 0 when nothing entered.
  double error_pct = 0;
  /// What the initial flow alone would have brought: the top + lateral
  /// inflow at the first sample times the run's duration.
  double base_m3 = 0;
  /// The same error volume relative to the event, the volume that entered
  /// above the initial flow: 100 (in + lateral − out − Δstorage) /
  /// (in + lateral − base). NaN when that event volume is not above 1e-6 of
  /// what entered (a steady run, or inflow that only falls).
  double event_error_pct = kNaN;
};

struct ReachSummary {
  double peak_q_m3s = kNaN;
  double peak_time_s = kNaN;        ///< seconds since the epoch, interpolated between samples
  double peak_depth_m = kNaN;
  double peak_velocity_ms = kNaN;
  double inflow_peak_m3s = kNaN;    ///< of top inflow + lateral inflow
  double inflow_peak_time_s = kNaN;
  double attenuation_pct = kNaN;    ///< 100 (inflow peak − outflow peak) / inflow peak
  double travel_time_s = kNaN;      ///< outflow peak time − inflow peak time
  VolumeBalance volume;
  ReachNumerics numerics;
};

enum class NodeKind {
  Headwater,
  Confluence,
  Outlet,
  Junction,        ///< one in, one out
  Bifurcation,     ///< one reach splits: one node, at its downstream end, listing every branch
  SideArmReturn,   ///< a confluence where a side arm rejoins the channel it left (network/Strahler.hpp)
};

struct ConfluenceBranch {
  std::uint32_t reach = 0;          ///< plan index of the incoming reach
  double peak_q_m3s = kNaN;         ///< its outflow peak (its share, below a bifurcation)
  double peak_time_s = kNaN;
};

/// One outgoing branch of a bifurcation.
struct BifurcationBranch {
  std::uint32_t reach = 0;          ///< plan index of the branch
  double share = kNaN;              ///< its share of the splitting reach's outflow
};

struct NodeSummary {
  std::string node_id;
  NodeKind kind = NodeKind::Junction;
  /// Plan index of the reach at whose top (headwater, junction, confluence,
  /// side-arm return) or bottom (outlet, bifurcation) the node lies.
  std::uint32_t reach = 0;
  /// The lake that sits on the node (routed there: its outflow is the flow
  /// leaving the node), or empty. Set by the run layer, which knows the
  /// lakes' ids (run::route); the router leaves it empty.
  std::string lake_id;
  double x = kNaN, y = kNaN;        ///< CRS units
  double peak_q_m3s = kNaN;         ///< combined flow at the node
  double peak_time_s = kNaN;
  std::vector<ConfluenceBranch> branches;   ///< incoming reaches: confluences and side-arm returns only
  std::vector<BifurcationBranch> outgoing;  ///< bifurcations only: largest share first (ties: by id)
  double branch_spread_s = kNaN;            ///< latest − earliest branch peak time
  double coincidence_ratio = kNaN;          ///< combined peak / sum of branch peaks
};

/// Receives each reach's outflow series as soon as it is final. Called
/// from one thread at a time, in an order that may vary between runs;
/// implementations must not depend on it.
class SeriesSink {
public:
  virtual ~SeriesSink() = default;
  virtual void write(std::uint32_t reach, std::span<const double> q_m3s,
                     std::span<const double> depth_m, std::span<const double> velocity_ms) = 0;
  /// False when write() would ignore `reach`: the router then neither
  /// computes the reach's depth and velocity series nor calls write().
  virtual bool wants(std::uint32_t /*reach*/) const { return true; }
  /// Receives reach `reach`'s summary as soon as it is final (only when
  /// wantsSummaries() says so; same threading as write()), so that a sink
  /// can write it while the rest of the network is routed. NetworkResults
  /// holds every summary at the end either way.
  virtual void summarised(std::uint32_t /*reach*/, const ReachSummary& /*summary*/) {}
  /// Receives a node as soon as it is final (with wantsSummaries(), for a
  /// network without lakes): `position` is its index in
  /// NetworkResults::nodes, `first_branch` the number of confluence branches
  /// of the nodes before it there.
  virtual void nodeFinished(std::size_t /*position*/, std::size_t /*first_branch*/, const NodeSummary& /*node*/) {}
  virtual bool wantsSummaries() const { return false; }
};

struct NetworkResults {
  TimeAxis axis;
  std::vector<ReachSummary> reaches;   ///< by plan index
  std::vector<NodeSummary> nodes;
  std::vector<std::string> warnings;   ///< summarised, one line each
  std::size_t peak_live_series = 0;    ///< most series held in memory at once
  unsigned threads = 0;                ///< worker threads the run could use
  /// Forcing series read from a file while routing (ForcingProvider::
  /// readsOnDemand): handed over read ahead, and read when asked because
  /// the reading thread had not got to them.
  std::size_t series_read_ahead = 0, series_read_on_demand = 0;
  /// Volume balance of the whole network: `inflow_m3` the point inflow (top
  /// inflow not coming from upstream reaches), `lateral_m3` the lateral
  /// inflow, `outflow_m3` what left through the outlets, `storage_change_m3`
  /// the sum over reaches.
  VolumeBalance volume;
  /// Sub-reaches × sub-steps × time steps summed over the reaches: the cell
  /// updates of the run, the unit of the kernel speed figures.
  double cell_updates = 0;
};

}  // namespace reachwise::routing
