#pragma once
/// \file
/// The forcing of a run: the files a user names, opened, checked against
/// the network and bound to its plan, ready for the router.

#include <optional>
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
};

/// A forcing source bound to a plan: what the router pulls from, by plan
/// index (routing::ForcingProvider), read straight into the router's
/// buffers. `source` and `plan` must outlive it.
class PlanForcing final : public routing::ForcingProvider {
public:
  PlanForcing(const io::ForcingSource& source, const network::NetworkPlan& plan) : source_(source), plan_(plan) {}
  bool inflow(std::uint32_t reach, std::span<double> out) const override {
    return source_.fill(io::ForcingKind::Inflow, plan_.reach_id[reach], out);
  }
  bool lateral(std::uint32_t reach, std::span<double> out) const override {
    return source_.fill(io::ForcingKind::Lateral, plan_.reach_id[reach], out);
  }

private:
  const io::ForcingSource& source_;
  const network::NetworkPlan& plan_;
};

/// Forcing opened and bound to a plan. The plan must outlive it.
class RunForcing {
public:
  /// Opens the files (`unit`: the network's unit system, which CSV
  /// discharges are in) and checks that they name only reaches of `plan`
  /// (one InputError lists every unknown id). Throws InputError naming the
  /// file for a missing or unreadable file.
  RunForcing(const ForcingFiles& files, const network::NetworkPlan& plan,
             units::System unit = units::System::SI);

  const routing::TimeAxis& axis() const { return opened_.source->axis(); }
  /// What the router reads, by plan index.
  const routing::ForcingProvider& provider() const noexcept { return bound_; }
  const io::ForcingSource& source() const noexcept { return *opened_.source; }
  /// What the readers did that a user should hear about, one line each.
  const std::vector<std::string>& warnings() const noexcept { return opened_.warnings; }

private:
  io::OpenedForcing opened_;
  PlanForcing bound_;
};

/// Base flow of each plan reach, m^3/s (the plan's, none = 0), for
/// routing::NetworkRouteOptions::base_flow_m3s; empty when no reach has one.
std::vector<double> baseFlows(const network::NetworkPlan& plan);

}  // namespace reachwise::run
