#pragma once
/// \file
/// The forcing of a run: the files a user names, opened, checked against
/// the network and bound to its plan, ready for the router.

#include <cstdint>
#include <functional>
#include <map>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/ForcingFiles.hpp"
#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/routing/NetworkRouter.hpp"

namespace reachwise::run {

/// Forcing files: each may be CSV (long or wide; read whole and, with
/// `dt_s`, resampled) or CF-NetCDF (read reach by reach while routing).
/// At least one of the two must be named.
struct ForcingFiles {
  std::string inflow;            ///< discharge entering at the top of named reaches
  std::string lateral;           ///< discharge entering along named reaches
  std::optional<double> dt_s;    ///< resample CSV forcing to this step, s; unset: the file's own
  std::size_t max_steps = io::kDefaultMaxSteps;   ///< longest time axis allowed (io/ForcingAxis.hpp)
};

/// A forcing source bound to a plan: what the router pulls from, by plan
/// index (routing::ForcingProvider), read straight into the router's
/// buffers. `source` and `plan` must outlive it.
///
/// Forcing named by the id of a line that topology from geometry cut
/// into pieces (plan `line_id`) goes to its pieces: an inflow to the top
/// piece (`<id>.1`), a lateral inflow shared over the pieces in proportion
/// to their lengths. Forcing for a line and for one of its pieces of the
/// same kind is refused by RunForcing (checkCutLineForcing), not here.
class PlanForcing final : public routing::ForcingProvider {
public:
  PlanForcing(const io::ForcingSource& source, const network::NetworkPlan& plan);
  bool inflow(std::uint32_t reach, std::span<double> out) const override;
  bool lateral(std::uint32_t reach, std::span<double> out) const override;
  ReadsOnDemand readsOnDemand() const override;
  /// One line per cut line whose id the forcing names, saying where its
  /// series go (`cut_line_forcing <id>: ...`, docs/formats.md).
  const std::vector<std::string>& notes() const noexcept { return notes_; }

private:
  /// Per plan reach: what it takes from its line's series (empty when the
  /// forcing names no cut line).
  struct FromLine {
    bool inflow = false;       ///< the top piece: the line's inflow
    double lateral_share = 0;  ///< > 0: this share of the line's lateral inflow
  };
  const io::ForcingSource& source_;
  const network::NetworkPlan& plan_;
  std::vector<FromLine> from_line_;
  std::vector<std::string> notes_;
};

/// Throws one InputError when `source` gives forcing of one kind both for
/// a cut line's id and for one of its pieces (plan `line_id`), naming both
/// and the file.
void checkCutLineForcing(const io::ForcingSource& source, const network::NetworkPlan& plan);

/// Forcing opened and bound to a plan. The plan must outlive it.
class RunForcing {
public:
  /// Opens the files (`unit`: the network's unit system, which CSV
  /// discharges are in) and checks that they name only reaches of `plan`
  /// or lines cut into its pieces (one InputError lists every unknown id,
  /// saying how a line was cut when an id looks like one of its pieces;
  /// see also checkCutLineForcing; and, with `dropped_in_lake` (reach id
  /// -> lake id, LoadedNetwork::dropped_in_lake), the lake a reach lies
  /// in when it was dropped from the network for it). Throws InputError
  /// naming the file for a missing or unreadable file.
  RunForcing(const ForcingFiles& files, const network::NetworkPlan& plan,
             units::System unit = units::System::SI,
             const std::map<std::string, std::string, std::less<>>* dropped_in_lake = nullptr);

  const routing::TimeAxis& axis() const { return opened_.source->axis(); }
  /// What the router reads, by plan index.
  const routing::ForcingProvider& provider() const noexcept { return bound_; }
  const io::ForcingSource& source() const noexcept { return *opened_.source; }
  /// What the readers did that a user should hear about, one line each,
  /// then where forcing for cut lines goes (PlanForcing::notes).
  const std::vector<std::string>& warnings() const noexcept { return opened_.warnings; }

private:
  io::OpenedForcing opened_;
  PlanForcing bound_;
};

/// Base flow of each plan reach, m^3/s (the plan's, none = 0), for
/// routing::NetworkRouteOptions::base_flow_m3s; empty when no reach has one.
std::vector<double> baseFlows(const network::NetworkPlan& plan);

}  // namespace reachwise::run
