#pragma once
/// \file
/// The columns and rows of the result tables, shared by the GeoPackage and
/// CSV writers so that both always hold the same fields in the same order.

#include <array>
#include <cstdint>
#include <span>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "reachwise/io/LakesWriter.hpp"
#include "reachwise/io/OutputUnits.hpp"
#include "reachwise/io/ResultsWriter.hpp"

namespace reachwise::io::results {

enum class ColumnType { Text, Real, Integer, Integer64, Boolean, DateTime };

struct Column {
  const char* name;
  ColumnType type;
  Quantity quantity = Quantity::None;   ///< what its unit is (None: dimensionless, a time or text)
};

/// `columns` (one of the lists below, SI) under their names in `system`
/// (io::fieldName: unit suffixes follow the system); the same list for SI.
const std::vector<Column>& inUnits(const std::vector<Column>& columns, units::System system);



/// An instant, seconds since the epoch (written as a date-time).
struct Instant {
  double unix_s;
};

/// monostate = NULL (NaN reals become NULL too).
using Value = std::variant<std::monostate, double, std::int64_t, std::string, Instant>;
using Row = std::vector<Value>;

/// Converts the values of `row` (SI, built for `columns`) that have a unit
/// into `system` (io::toOutputUnits).
void convertRow(Row& row, const std::vector<Column>& columns, units::System system);

const std::vector<Column>& reachColumns();
Row reachRow(const network::NetworkPlan& plan, const routing::ReachSummary& summary, std::size_t i);

/// The fields an ensemble run adds to `reaches` (after reachColumns()):
/// `members`, then `peak_q_p10` ... `peak_time_p90`.
const std::vector<Column>& ensembleReachColumns();
/// reachColumns() then ensembleReachColumns(): the `reaches` of an ensemble run.
const std::vector<Column>& ensembleRunReachColumns();
/// Those fields of plan reach `i`.
Row ensembleReachRow(const EnsembleOutput& ensemble, std::size_t i);
/// The `member_reaches` table: member, reach_id, peak_q, peak_time, volume_out_m3.
const std::vector<Column>& memberReachColumns();
/// Its row of member `m` at plan reach `i`.
Row memberReachRow(const network::NetworkPlan& plan, const EnsembleOutput& ensemble, std::size_t m, std::size_t i);

const std::vector<Column>& nodeColumns();
Row nodeRow(const network::NetworkPlan& plan, const routing::NodeSummary& node);

const std::vector<Column>& branchColumns();
Row branchRow(const network::NetworkPlan& plan, const routing::NodeSummary& node,
              const routing::ConfluenceBranch& branch);

/// The `lakes` layer: one row per routed lake (times from `axis`).
const std::vector<Column>& lakeColumns();
const std::vector<Column>& gaugeColumns();
Row gaugeRow(const GaugeOutput& gauge);
const std::vector<Column>& gaugeSeriesColumns();
Row lakeRow(const routing::TimeAxis& axis, const LakeOutput& lake);

/// The `lake_series` table: `lake_id`, `time`, then the four series of
/// lakeSeries(), one row per lake and time step.
const std::vector<Column>& lakeSeriesColumns();
/// A routed lake's level (m), storage (m^3), inflow and outflow (m^3/s),
/// in the order of their columns; each `steps` long.
/// (The quantities of the four, in that order: kLakeSeriesQuantities.)
std::array<std::span<const double>, 4> lakeSeries(const LakeOutput& lake, std::size_t steps);
inline constexpr std::array<Quantity, 4> kLakeSeriesQuantities = {Quantity::Length, Quantity::Volume,
                                                                  Quantity::Discharge, Quantity::Discharge};

/// key/value rows of `run_info`, in order.
std::vector<std::pair<std::string, std::string>> runInfoRows(const routing::NetworkResults& results,
                                                             const RunInfo& info);

const char* nodeKindName(routing::NodeKind kind);

/// The vertices of plan reach `i`'s line in flow direction (reversed when
/// `plan.reversed[i]`), so that a GIS draws arrows downstream.
std::vector<network::Point3> flowLine(const network::ReachTable& table,
                                      const network::NetworkPlan& plan, std::size_t i);

/// Wall-clock fields of an instant at a UTC offset, rounded to the
/// millisecond; `tz_flag` is OGR's (100 = UTC, each unit 15 minutes).
/// Offsets that are not a whole number of quarter hours cannot be flagged
/// in OGR, so such instants are given in UTC.
struct WallClock {
  int year, month, day, hour, minute;
  float second;
  int tz_flag;
};
WallClock wallClock(double unix_s, int utc_offset_min);

/// Offset the writers use for `axis`: its own, or 0 when OGR cannot flag it.
int writableOffsetMin(int utc_offset_min);

}  // namespace reachwise::io::results
