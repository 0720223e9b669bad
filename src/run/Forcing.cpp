#include "reachwise/run/Forcing.hpp"

#include <filesystem>
#include <set>

#include "reachwise/run/Network.hpp"

namespace reachwise::run {

namespace {

io::OpenedForcing openChecked(const ForcingFiles& files, const network::NetworkPlan& plan, units::System unit) {
  if (files.inflow.empty() && files.lateral.empty())
    throw InvalidParameter("forcing", "neither an inflow nor a lateral inflow file is named");
  io::CsvForcingOptions options;
  options.dt_s = files.dt_s;
  options.unit = unit;
  auto path = [](const std::string& p) {
    if (p.empty()) return std::optional<std::filesystem::path>();
    requireExisting(p);
    return std::optional<std::filesystem::path>(p);
  };
  const auto inflow = path(files.inflow);
  const auto lateral = path(files.lateral);
  io::OpenedForcing opened = io::openForcing(inflow, lateral, options);
  const std::set<std::string, std::less<>> known(plan.reach_id.begin(), plan.reach_id.end());
  io::requireKnownReaches(*opened.source, known);
  return opened;
}

}  // namespace

RunForcing::RunForcing(const ForcingFiles& files, const network::NetworkPlan& plan, units::System unit)
    : opened_(openChecked(files, plan, unit)), bound_(*opened_.source, plan) {}

std::vector<double> baseFlows(const network::NetworkPlan& plan) {
  std::vector<double> q(plan.size(), 0.0);
  bool any = false;
  for (std::size_t i = 0; i < plan.size(); ++i) {
    const double b = plan.base_flow_m3s[i];
    if (b > 0) q[i] = b, any = true;  // NaN (none) and 0 stay 0
  }
  return any ? q : std::vector<double>{};
}

}  // namespace reachwise::run
