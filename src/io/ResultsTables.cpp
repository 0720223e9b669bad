#include "ResultsTables.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <deque>
#include <map>
#include <mutex>
#include <unordered_set>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/version.hpp"

namespace reachwise::io {

const char* const kResultsCaution =
    "Estimates from simplified hydraulics (no backwater, no structures); not a substitute for "
    "local design codes and the judgement of a licensed engineer.";

std::vector<bool> SeriesSelection::mask(std::size_t n_reaches) const {
  std::vector<bool> out(n_reaches, all_);
  for (const auto r : reaches_) {
    if (r >= n_reaches)
      throw InvalidParameter("hydrograph selection",
                             fmt::format("reach index {} is beyond the {} reaches of the network",
                                         r, n_reaches));
    out[r] = true;
  }
  return out;
}

namespace results {

namespace {

using CT = ColumnType;

Value real(double v) { return std::isnan(v) ? Value{} : Value{v}; }
Value instant(double t) { return std::isnan(t) ? Value{} : Value{Instant{t}}; }
Value integer(std::uint64_t v) { return Value{static_cast<std::int64_t>(v)}; }
Value hours(double s) { return std::isnan(s) ? Value{} : Value{s / 3600.0}; }

}  // namespace

const std::vector<Column>& inUnits(const std::vector<Column>& columns, units::System system) {
  if (system == units::System::SI) return columns;
  // Built once per list and kept for the program's life (the names are
  // `const char*` into `names`).
  static std::mutex mutex;
  static std::map<const std::vector<Column>*, std::vector<Column>> lists;
  static std::deque<std::string> names;
  const std::lock_guard lock(mutex);
  auto it = lists.find(&columns);
  if (it == lists.end()) {
    std::vector<Column> renamed = columns;
    for (Column& c : renamed) {
      std::string name = fieldName(c.name, system);
      if (name != c.name) c.name = names.emplace_back(std::move(name)).c_str();
    }
    it = lists.emplace(&columns, std::move(renamed)).first;
  }
  return it->second;
}

void convertRow(Row& row, const std::vector<Column>& columns, units::System system) {
  REACHWISE_ASSERT(row.size() == columns.size());
  for (std::size_t c = 0; c < row.size(); ++c)
    if (auto* d = std::get_if<double>(&row[c]); d && columns[c].quantity != Quantity::None)
      *d = toOutputUnits(system, columns[c].quantity, *d);
}

const std::vector<Column>& reachColumns() {
  static const std::vector<Column> columns = {
      {"reach_id", CT::Text},          {"peak_q", CT::Real, Quantity::Discharge},
      {"peak_time", CT::DateTime},     {"peak_depth", CT::Real, Quantity::Length},
      {"peak_velocity", CT::Real, Quantity::Velocity},     {"inflow_peak_q", CT::Real, Quantity::Discharge},
      {"inflow_peak_time", CT::DateTime}, {"attenuation_pct", CT::Real},
      {"travel_time_h", CT::Real},     {"volume_in_m3", CT::Real, Quantity::Volume},
      {"volume_lateral_m3", CT::Real, Quantity::Volume}, {"volume_out_m3", CT::Real, Quantity::Volume},
      {"storage_change_m3", CT::Real, Quantity::Volume}, {"volume_error_pct", CT::Real},
      {"subreaches", CT::Integer},     {"substeps", CT::Integer},
      {"dx_m", CT::Real, Quantity::Length},              {"dt_sub_s", CT::Real},
      {"courant", CT::Real},           {"x", CT::Real},
      {"cell_reynolds", CT::Real},     {"reference_q", CT::Real, Quantity::Discharge},
      {"amplitude_ratio", CT::Real},   {"phase_ratio", CT::Real},
      {"negative_clamps", CT::Integer64}, {"x_clamps", CT::Integer64},
      {"surcharge_cells", CT::Integer64}, {"grid_compromise", CT::Boolean},
      {"strahler", CT::Integer},       {"basin", CT::Integer},
      {"event_volume_error_pct", CT::Real}, {"x_clamp_cause", CT::Text},
      {"envelope_exceedances", CT::Integer64}, {"envelope_excursion_pct", CT::Real},
      {"ponce_number", CT::Real},      {"method", CT::Text},
      {"split", CT::Real},             {"line_id", CT::Text},
  };
  return columns;
}

Row reachRow(const network::NetworkPlan& plan, const routing::ReachSummary& s, std::size_t i) {
  const auto& n = s.numerics;
  const auto& v = s.volume;
  Row row;
  row.reserve(reachColumns().size());
  row.emplace_back(plan.reach_id[i]);
  row.push_back(real(s.peak_q_m3s));
  row.push_back(instant(s.peak_time_s));
  row.push_back(real(s.peak_depth_m));
  row.push_back(real(s.peak_velocity_ms));
  row.push_back(real(s.inflow_peak_m3s));
  row.push_back(instant(s.inflow_peak_time_s));
  row.push_back(real(s.attenuation_pct));
  row.push_back(hours(s.travel_time_s));
  row.push_back(real(v.inflow_m3));
  row.push_back(real(v.lateral_m3));
  row.push_back(real(v.outflow_m3));
  row.push_back(real(v.storage_change_m3));
  row.push_back(real(v.error_pct));
  row.push_back(integer(n.subreaches));
  row.push_back(integer(n.substeps));
  row.push_back(real(n.dx_m));
  row.push_back(real(n.dt_sub_s));
  row.push_back(real(n.courant));
  row.push_back(real(n.x));
  row.push_back(real(n.cell_reynolds));
  row.push_back(real(n.reference_q_m3s));
  row.push_back(real(n.amplitude_ratio));
  row.push_back(real(n.phase_ratio));
  row.push_back(integer(n.negative_clamps));
  row.push_back(integer(n.x_clamps));
  row.push_back(integer(n.surcharge_cells));
  row.push_back(integer(n.grid_compromise ? 1 : 0));
  row.push_back(i < plan.strahler.size() ? integer(plan.strahler[i]) : Value{});
  row.push_back(i < plan.basin.size() ? integer(plan.basin[i]) : Value{});
  row.push_back(real(v.event_error_pct));
  if (n.x_clamp_cause == routing::XClampCause::None) row.emplace_back();
  else row.emplace_back(std::string(routing::xClampCauseName(n.x_clamp_cause)));
  row.push_back(integer(n.envelope_exceedances));
  row.push_back(real(n.envelope_excursion_pct));
  row.push_back(real(n.ponce_number));
  row.emplace_back(std::string(routing::methodName(n.method)));
  row.push_back(i < plan.split.size() ? real(plan.split[i]) : Value{});
  if (i < plan.line_id.size() && !plan.line_id[i].empty()) row.emplace_back(plan.line_id[i]);
  else row.emplace_back();
  REACHWISE_ASSERT(row.size() == reachColumns().size());
  return row;
}

const std::vector<Column>& ensembleReachColumns() {
  static const std::vector<Column> columns = {
      {"members", CT::Integer},
      {"peak_q_p10", CT::Real, Quantity::Discharge},  {"peak_q_p50", CT::Real, Quantity::Discharge},
      {"peak_q_p90", CT::Real, Quantity::Discharge},  {"peak_time_p10", CT::DateTime},
      {"peak_time_p50", CT::DateTime},                {"peak_time_p90", CT::DateTime},
  };
  return columns;
}

const std::vector<Column>& ensembleRunReachColumns() {
  static const std::vector<Column> columns = [] {
    std::vector<Column> all = reachColumns();
    all.insert(all.end(), ensembleReachColumns().begin(), ensembleReachColumns().end());
    return all;
  }();
  return columns;
}

Row ensembleReachRow(const EnsembleOutput& e, std::size_t i) {
  REACHWISE_ASSERT(i < e.peak_q_m3s.size() && i < e.peak_time_s.size() && i < e.counted.size());
  Row row;
  row.push_back(integer(e.counted[i]));
  for (const double q : e.peak_q_m3s[i]) row.push_back(real(q));
  for (const double t : e.peak_time_s[i]) row.push_back(instant(t));
  REACHWISE_ASSERT(row.size() == ensembleReachColumns().size());
  return row;
}

const std::vector<Column>& memberReachColumns() {
  static const std::vector<Column> columns = {
      {"member", CT::Text},
      {"reach_id", CT::Text},
      {"peak_q", CT::Real, Quantity::Discharge},
      {"peak_time", CT::DateTime},
      {"volume_out_m3", CT::Real, Quantity::Volume},
  };
  return columns;
}

Row memberReachRow(const network::NetworkPlan& plan, const EnsembleOutput& e, std::size_t m, std::size_t i) {
  const std::size_t at = m * plan.size() + i;
  REACHWISE_ASSERT(m < e.members.size() && at < e.member_peak_q_m3s.size());
  Row row;
  row.emplace_back(e.members[m]);
  row.emplace_back(plan.reach_id[i]);
  row.push_back(real(e.member_peak_q_m3s[at]));
  row.push_back(instant(e.member_peak_time_s[at]));
  row.push_back(real(e.member_volume_out_m3[at]));
  return row;
}

const char* nodeKindName(routing::NodeKind kind) {
  switch (kind) {
    case routing::NodeKind::Headwater: return "headwater";
    case routing::NodeKind::Confluence: return "confluence";
    case routing::NodeKind::Outlet: return "outlet";
    case routing::NodeKind::Junction: return "junction";
    case routing::NodeKind::Bifurcation: return "bifurcation";
    case routing::NodeKind::SideArmReturn: return "side_arm_return";
  }
  return "junction";
}

const std::vector<Column>& nodeColumns() {
  static const std::vector<Column> columns = {
      {"node_id", CT::Text},          {"kind", CT::Text},
      {"peak_q", CT::Real, Quantity::Discharge},           {"peak_time", CT::DateTime},
      {"branch_count", CT::Integer},  {"branch_spread_h", CT::Real},
      {"coincidence_ratio", CT::Real}, {"branches", CT::Text},
      {"lake_id", CT::Text},
  };
  return columns;
}

Row nodeRow(const network::NetworkPlan& plan, const routing::NodeSummary& node) {
  Row row;
  row.emplace_back(node.node_id);
  row.emplace_back(std::string(nodeKindName(node.kind)));
  row.push_back(real(node.peak_q_m3s));
  row.push_back(instant(node.peak_time_s));
  row.push_back(integer(node.kind == routing::NodeKind::Bifurcation ? node.outgoing.size()
                                                                     : node.branches.size()));
  row.push_back(hours(node.branch_spread_s));
  row.push_back(real(node.coincidence_ratio));
  // A bifurcation's branches and shares: "12:0.7;13:0.3".
  std::string branches;
  for (const auto& b : node.outgoing) {
    REACHWISE_ASSERT(b.reach < plan.size());
    branches += fmt::format("{}{}:{:.6g}", branches.empty() ? "" : ";", plan.reach_id[b.reach], b.share);
  }
  if (branches.empty()) row.emplace_back();
  else row.emplace_back(std::move(branches));
  if (node.lake_id.empty()) row.emplace_back();
  else row.emplace_back(node.lake_id);
  REACHWISE_ASSERT(row.size() == nodeColumns().size());
  return row;
}

const std::vector<Column>& branchColumns() {
  static const std::vector<Column> columns = {
      {"node_id", CT::Text},
      {"branch_reach_id", CT::Text},
      {"branch_peak_q", CT::Real, Quantity::Discharge},
      {"branch_peak_time", CT::DateTime},
  };
  return columns;
}

Row branchRow(const network::NetworkPlan& plan, const routing::NodeSummary& node,
              const routing::ConfluenceBranch& branch) {
  REACHWISE_ASSERT(branch.reach < plan.size());
  Row row;
  row.emplace_back(node.node_id);
  row.emplace_back(plan.reach_id[branch.reach]);
  row.push_back(real(branch.peak_q_m3s));
  row.push_back(instant(branch.peak_time_s));
  return row;
}

const std::vector<Column>& gaugeColumns() {
  static const std::vector<Column> columns = {
      {"gauge_id", CT::Text},        {"reach_id", CT::Text},         {"snap_distance_m", CT::Real, Quantity::Length},
      {"n_obs", CT::Integer64},      {"nse", CT::Real},              {"nse_peak_weighted", CT::Real},
      {"kge", CT::Real},             {"kge_r", CT::Real},            {"kge_alpha", CT::Real},
      {"kge_beta", CT::Real},        {"pbias_pct", CT::Real},        {"volume_error_m3", CT::Real, Quantity::Volume},
      {"peak_error_pct", CT::Real},  {"peak_timing_h", CT::Real},
  };
  return columns;
}

Row gaugeRow(const GaugeOutput& gauge) {
  const auto& k = gauge.skill;
  Row row{gauge.gauge_id,        gauge.reach_id,           real(gauge.snap_distance_m),
          integer(k.n_obs),      real(k.nse),              real(k.nse_peak_weighted),
          real(k.kge),           real(k.kge_r),            real(k.kge_alpha),
          real(k.kge_beta),      real(k.pbias_pct),        real(k.volume_error_m3),
          real(k.peak_error_pct), real(k.peak_timing_h)};
  REACHWISE_ASSERT(row.size() == gaugeColumns().size());
  return row;
}

const std::vector<Column>& gaugeSeriesColumns() {
  static const std::vector<Column> columns = {
      {"gauge_id", CT::Text}, {"time", CT::DateTime}, {"observed_q", CT::Real, Quantity::Discharge}, {"simulated_q", CT::Real, Quantity::Discharge}};
  return columns;
}

const std::vector<Column>& lakeColumns() {
  static const std::vector<Column> columns = {
      {"lake_id", CT::Text},           {"reach_id", CT::Text},
      {"inflow_peak_m3s", CT::Real, Quantity::Discharge},   {"inflow_peak_time", CT::DateTime},
      {"outflow_peak_m3s", CT::Real, Quantity::Discharge},  {"outflow_peak_time", CT::DateTime},
      {"attenuation_pct", CT::Real},   {"lag_h", CT::Real},
      {"peak_level_m", CT::Real, Quantity::Length},      {"peak_storage_m3", CT::Real, Quantity::Volume},
      {"volume_in_m3", CT::Real, Quantity::Volume},      {"volume_out_m3", CT::Real, Quantity::Volume},
      {"storage_change_m3", CT::Real, Quantity::Volume}, {"volume_error_m3", CT::Real, Quantity::Volume},
      {"substeps", CT::Integer},
  };
  return columns;
}

Row lakeRow(const routing::TimeAxis& axis, const LakeOutput& lake) {
  REACHWISE_ASSERT(lake.lake && lake.routing);
  const auto& r = lake.routing->result;
  const LakeFigures f = lakeFigures(*lake.routing, axis);
  Row row;
  row.reserve(lakeColumns().size());
  row.emplace_back(lake.lake->lake_id);
  if (lake.outflow_reach.empty())
    row.emplace_back(std::monostate{});  // a terminal lake: its outflow enters no reach
  else
    row.emplace_back(lake.outflow_reach);
  row.push_back(real(f.inflow_peak_m3s));
  row.push_back(instant(f.inflow_peak_time_s));
  row.push_back(real(f.outflow_peak_m3s));
  row.push_back(instant(f.outflow_peak_time_s));
  row.push_back(real(f.attenuation_pct));
  row.push_back(hours(f.lag_s));
  row.push_back(real(f.peak_level_m));
  row.push_back(real(f.peak_storage_m3));
  row.push_back(real(r.volume_in_m3));
  row.push_back(real(r.volume_out_m3));
  row.push_back(real(r.storage_change_m3));
  row.push_back(real(r.volume_error_m3));
  row.push_back(integer(r.substeps));
  REACHWISE_ASSERT(row.size() == lakeColumns().size());
  return row;
}

const std::vector<Column>& lakeSeriesColumns() {
  static const std::vector<Column> columns = {
      {"lake_id", CT::Text},     {"time", CT::DateTime},    {"level_m", CT::Real, Quantity::Length},
      {"storage_m3", CT::Real, Quantity::Volume},  {"inflow_m3s", CT::Real, Quantity::Discharge},  {"outflow_m3s", CT::Real, Quantity::Discharge},
  };
  return columns;
}

std::array<std::span<const double>, 4> lakeSeries(const LakeOutput& lake, std::size_t steps) {
  REACHWISE_ASSERT(lake.lake && lake.routing);
  const auto& r = lake.routing->result;
  const std::array<std::span<const double>, 4> series = {r.level_m, r.storage_m3, lake.routing->inflow_m3s,
                                                         r.outflow_m3s};
  for (const auto& s : series) REACHWISE_ASSERT(s.size() == steps);
  return series;
}

std::vector<network::Point3> flowLine(const network::ReachTable& table,
                                      const network::NetworkPlan& plan, std::size_t i) {
  REACHWISE_ASSERT(i < plan.record.size() && plan.record[i] < table.reaches.size());
  REACHWISE_ASSERT(i < plan.reversed.size());
  auto line = table.reaches[plan.record[i]].line;
  if (plan.reversed[i]) std::reverse(line.begin(), line.end());
  return line;
}

std::vector<std::pair<std::string, std::string>> runInfoRows(const routing::NetworkResults& results,
                                                             const RunInfo& info) {
  const auto& axis = results.axis;
  const int offset = writableOffsetMin(axis.utc_offset_min);
  std::vector<std::pair<std::string, std::string>> rows;
  for (const auto& input : info.inputs) rows.emplace_back("input", input);
  rows.emplace_back("method", info.method);
  rows.emplace_back("units", std::string(unitSystemName(info.units)));
  rows.emplace_back("ranks", fmt::format("{}", info.ranks));
  rows.emplace_back("dt_s", fmt::format("{}", axis.dt_s));
  rows.emplace_back("steps", fmt::format("{}", axis.steps));
  rows.emplace_back("start", formatIsoTime(axis.start_unix_s, offset));
  rows.emplace_back("end", formatIsoTime(axis.at(static_cast<double>(axis.steps > 0 ? axis.steps - 1 : 0)),
                                         offset, 0));
  rows.emplace_back("utc_offset_min", fmt::format("{}", axis.utc_offset_min));
  rows.emplace_back("reaches", fmt::format("{}", results.reaches.size()));
  rows.emplace_back("cell_updates", fmt::format("{:.0f}", results.cell_updates));
  rows.emplace_back("peak_live_series", fmt::format("{}", results.peak_live_series));
  const double event_pct = results.volume.event_error_pct;
  rows.emplace_back("event_volume_error_pct",
                    std::isnan(event_pct) ? std::string("none: no volume entered above the initial flow")
                                          : fmt::format("{:.4g}", event_pct));
  if (!info.series_file.empty()) rows.emplace_back("series", info.series_file);
  if (!info.members.empty()) {
    rows.emplace_back("members", fmt::format("{}", info.members.size()));
    for (const auto& m : info.members) rows.emplace_back("member", m);
  }
  rows.emplace_back("version", kVersion);
  rows.emplace_back("git_hash", kGitHash);
  rows.emplace_back("command_line", info.command_line);
  // The caller may pass the results' warnings in `info` too; each is listed once.
  std::unordered_set<std::string> seen;
  for (const auto* list : {&info.warnings, &results.warnings})
    for (const auto& w : *list)
      if (seen.insert(w).second) rows.emplace_back("warning", w);
  rows.emplace_back("caution", kResultsCaution);
  return rows;
}

int writableOffsetMin(int utc_offset_min) {
  return utc_offset_min % 15 == 0 ? utc_offset_min : 0;
}

WallClock wallClock(double unix_s, int utc_offset_min) {
  using namespace std::chrono;
  const int offset = writableOffsetMin(utc_offset_min);
  constexpr std::int64_t kDayMs = 86'400'000;
  const auto local_ms = static_cast<std::int64_t>(std::llround((unix_s + offset * 60.0) * 1000.0));
  std::int64_t day = local_ms / kDayMs;
  if (local_ms % kDayMs < 0) --day;  // floor division for instants before 1970
  const std::int64_t in_day = local_ms - day * kDayMs;
  const year_month_day ymd{sys_days{days{day}}};
  WallClock w{};
  w.year = static_cast<int>(ymd.year());
  w.month = static_cast<int>(static_cast<unsigned>(ymd.month()));
  w.day = static_cast<int>(static_cast<unsigned>(ymd.day()));
  w.hour = static_cast<int>(in_day / 3'600'000);
  w.minute = static_cast<int>(in_day / 60'000 % 60);
  w.second = static_cast<float>(in_day % 60'000) / 1000.0f;
  w.tz_flag = 100 + offset / 15;
  return w;
}

}  // namespace results
}  // namespace reachwise::io
