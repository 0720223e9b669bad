#pragma once
/// \file
/// Forecast ensembles: one network routed with many point-inflow forcings
/// (the members), each member's results kept, and per reach the spread of
/// the members' peaks (docs/formats.md, "Ensembles").
///
/// In three steps, so that the members can be spread over processes:
///
///     const reachwise::run::Ensemble e(request);          // network once, every member's forcing checked
///     auto outputs = reachwise::run::openEnsembleOutputs(e);   // refused outputs cost no routing
///     reachwise::run::ReferenceRun reference;
///     auto results = reachwise::run::routeMembers(e, all_members, 0, &reference);   // any subset
///     reachwise::run::writeEnsemble(e, *outputs, std::move(results), std::move(reference));
///
/// routeMembers() returns plain data (MemberResult: vectors of numbers and
/// plan indices), so that results routed elsewhere can be sent back and
/// combined in member order. A process that routes only its share opens
/// only those members (Ensemble's `opened`); the one that writes needs the
/// reference member's full results (ReferenceRun), so it routes member 0.
/// routeEnsemble() does all three, in one process or among MPI ranks.

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/report/Report.hpp"
#include "reachwise/run/Route.hpp"

namespace reachwise::run {

/// The `p`-th percentile (0 ≤ p ≤ 100) of `values`, NaNs left out
/// (NaN when none is left): linear interpolation between order statistics,
/// Hyndman & Fan (1996) definition 7: for the sorted x_1 ≤ ... ≤ x_n and
/// h = (n − 1) p/100 + 1, Q = x_⌊h⌋ + (h − ⌊h⌋) (x_⌊h⌋+1 − x_⌊h⌋) (the
/// default of R's quantile() and NumPy's percentile()). Hyndman, R. J. & Fan, Y. (1996) "Sample quantiles in
/// statistical packages", The American Statistician 50(4): 361–365.
double percentile(std::vector<double> values, double p);

/// The forcing files `dir_or_pattern` names, sorted by name: every regular
/// file in a folder (hidden files left out), or the files a glob(3)
/// pattern matches. InputError naming the pattern when none is found.
std::vector<std::string> memberFiles(const std::string& dir_or_pattern);

/// A member's name: its file's stem (`runs/m07.csv` -> `m07`).
std::string memberName(const std::string& file);

/// An ensemble ready to route: the network loaded and planned once, and
/// every member's forcing opened and checked against it (RunForcing: the
/// member's file as the inflow, RouteRequest::forcing.lateral shared by
/// all) and against each other (one time axis). Throws InputError naming
/// the file for a bad member, a name used twice or an axis that differs
/// from the first member's; NetworkHasErrors as route() does.
class Ensemble {
public:
  /// `request.members` names the members; `request.forcing.inflow` must be
  /// empty (each member replaces it). Gauges, saved states and a NetCDF
  /// series file are refused (not supported for ensembles).
  /// `opened`: the members whose forcing is opened and checked (indices
  /// into names(), e.g. a process's share); empty: every member. Only
  /// opened members can be routed; the time axis is the first opened
  /// member's, and the axes are compared among the opened members.
  explicit Ensemble(const RouteRequest& request, Progress* progress = nullptr,
                    const std::vector<std::uint32_t>& opened = {});
  ~Ensemble();
  Ensemble(const Ensemble&) = delete;
  Ensemble& operator=(const Ensemble&) = delete;

  const RouteRequest& request() const noexcept { return request_; }
  const LoadedNetwork& network() const noexcept { return *net_; }
  const network::NetworkPlan& plan() const noexcept { return plan_; }
  const routing::TimeAxis& axis() const;
  std::size_t size() const noexcept { return files_.size(); }
  const std::vector<std::string>& names() const noexcept { return names_; }
  const std::vector<std::string>& files() const noexcept { return files_; }
  /// Whether member `m`'s forcing is opened (the constructor's `opened`).
  bool isOpened(std::size_t m) const { return m < forcing_.size() && forcing_[m] != nullptr; }
  /// The forcing of member `m`; InvalidParameter when it is not opened.
  const RunForcing& forcing(std::size_t m) const;
  /// Per plan reach: whether a MemberResult keeps its series (the chosen
  /// hydrographs, the report's reaches and the outlets for its band).
  const std::vector<bool>& keptSeries() const noexcept { return kept_; }
  /// The outputs as the request names them, with the member names.
  OutputRequest outputRequest() const;

private:
  RouteRequest request_;
  std::unique_ptr<LoadedNetwork> net_;
  network::NetworkPlan plan_;
  std::vector<std::string> files_, names_;
  std::vector<std::unique_ptr<RunForcing>> forcing_;
  std::vector<bool> kept_;
};

/// One member's results, plain data (no pointers), by plan index.
struct MemberResult {
  std::uint32_t member = 0;       ///< index into Ensemble::names()
  std::vector<double> peak_q_m3s, peak_time_s, volume_out_m3;
  /// The plan reaches whose series are kept (Ensemble::keptSeries(),
  /// ascending) and their outflow, depth and velocity, reach after reach
  /// (`[k * steps + t]` for series_reaches[k]; depth and velocity NaN where
  /// the router gave none).
  std::vector<std::uint32_t> series_reaches;
  std::vector<double> q_m3s, depth_m, velocity_ms;
  /// The member's forcing and routing warnings, one line each.
  std::vector<std::string> warnings;
};

/// Everything a run keeps of the reference member (member 0): its
/// results and lakes, for the tables that describe one routing (nodes,
/// confluence branches, lakes, the regular fields of `reaches`).
struct ReferenceRun {
  routing::NetworkResults results;
  std::vector<LakeResult> lakes;
};

/// Routes the members `members` (indices into e.names(), any subset, any
/// order) and returns their results in that order. Members run side by side
/// on `threads` threads (0: all cores), each routed on one thread; the
/// results do not depend on `threads`. When `reference` is given and
/// member 0 is among `members`, it receives member 0's full results.
/// Progress: routed(members done, members asked).
std::vector<MemberResult> routeMembers(const Ensemble& e, std::span<const std::uint32_t> members, unsigned threads,
                                       ReferenceRun* reference = nullptr, Progress* progress = nullptr);

/// The members rank `rank` of `ranks` routes: every `ranks`-th from
/// `rank` (member 0, whose full results the tables of one routing show,
/// on rank 0, which writes).
std::vector<std::uint32_t> membersOfRank(std::size_t members, int rank, int ranks);

/// The members rank `ranks.rank()` opens in its Ensemble: its own
/// (membersOfRank) and member 0, whose time axis every rank checks its
/// members against.
std::vector<std::uint32_t> membersOpenedOnRank(std::size_t members, const routing::Ranks& ranks);

/// routeMembers() spread over MPI ranks (`ranks` null or of one rank: this
/// process routes every member): each rank routes membersOfRank() on
/// `threads` threads (0: the machine's cores shared among its ranks), and
/// rank 0 gets every member's result in member order (the other ranks
/// get nothing) and member 0's in `reference`. A collective: every rank
/// calls it; a failure on any rank fails every rank (routing::onEveryRank).
std::vector<MemberResult> routeMembersAmongRanks(const Ensemble& e, routing::Ranks* ranks, unsigned threads,
                                                 ReferenceRun* reference = nullptr, Progress* progress = nullptr);

/// The threads routeMembers() runs on for `threads` (0: all cores; never
/// more than the cores).
unsigned memberThreads(unsigned threads);

/// The spread of the members' peaks: `members` in member order (all of
/// them, `members[m].member == m`), `names` their names.
io::EnsembleOutput combineMembers(const std::vector<MemberResult>& members, const std::vector<std::string>& names,
                                  std::size_t reaches);

/// The report's band: per outlet in `outlets` whose series the members
/// kept, the members' 10th, 50th and 90th percentile at each step.
report::ReportEnsemble reportBands(const std::vector<MemberResult>& members, const std::vector<std::string>& names,
                                   const std::vector<std::uint32_t>& outlets, std::size_t steps);

/// The outputs of `e`, opened before routing (OutputRequest::members set).
std::unique_ptr<Outputs> openEnsembleOutputs(const Ensemble& e);

struct EnsembleSummary {
  std::vector<std::string> names;       ///< the members, in order
  ReferenceRun reference;               ///< member 0's full results
  io::EnsembleOutput ensemble;          ///< the percentiles and per-member peaks
  io::RunInfo info;
  std::string gpkg;                     ///< the GeoPackage written, or empty
  std::vector<std::string> notes;       ///< from putting the outputs in place
  double routing_s = 0;                 ///< wall time of routing the members
  unsigned threads = 0;                 ///< threads the members were routed on
  /// The ensemble as read (network, plan, member names); set by
  /// routeEnsemble().
  std::unique_ptr<Ensemble> source;
};

/// Combines every member's results (`members` in member order, all of
/// them) and writes the outputs through `outputs` (one io::OutputCommit:
/// all appear or none). `reference`: member 0's full results.
EnsembleSummary writeEnsemble(const Ensemble& e, Outputs& outputs, std::vector<MemberResult> members,
                              ReferenceRun reference);

/// The whole ensemble run: Ensemble, openEnsembleOutputs,
/// routeMembersAmongRanks on request.threads, writeEnsemble. Among MPI
/// ranks (request.ranks) each rank opens membersOpenedOnRank() and routes
/// its share, rank 0 alone opens and writes the outputs, and every step
/// fails on every rank when it fails on one; the other ranks' summaries
/// hold `source` only.
EnsembleSummary routeEnsemble(const RouteRequest& request, Progress* progress = nullptr);

}  // namespace reachwise::run
