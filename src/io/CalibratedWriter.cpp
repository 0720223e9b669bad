#include "reachwise/io/CalibratedWriter.hpp"

#include <gdal_priv.h>

#include "ResultsTables.hpp"
#include "TableLayer.hpp"

namespace reachwise::io {

namespace {

using results::Column;
using CT = results::ColumnType;

const std::vector<Column>& calibrationColumns() {
  static const std::vector<Column> columns = {
      {"gauge_id", CT::Text},          {"reach_id", CT::Text},         {"reaches", CT::Integer64},
      {"parameter", CT::Text},         {"multiplier", CT::Real},       {"lower", CT::Real},
      {"upper", CT::Real},             {"at_bound", CT::Boolean},      {"objective", CT::Text},
      {"objective_before", CT::Real},  {"objective_after", CT::Real},  {"nse_before", CT::Real},
      {"nse_after", CT::Real},         {"kge_before", CT::Real},       {"kge_after", CT::Real},
      {"evaluations", CT::Integer64}, {"muskingum_x", CT::Real},
  };
  return columns;
}

results::Value real(double v) { return std::isnan(v) ? results::Value{} : results::Value{v}; }
results::Value count(std::size_t n) { return results::Value{static_cast<std::int64_t>(n)}; }

}  // namespace

void writeCalibratedGeoPackage(const std::string& path, bool overwrite, const network::ReachGraph& graph,
                               const NetworkConfig& config, const std::vector<PreparedReach>& prepared,
                               const network::ProblemList& problems, const std::vector<CalibrationRow>& rows,
                               const std::vector<GaugeOutput>& gauges, int utc_offset_min, OutputCommit* into) {
  writePreparedGeoPackage(path, overwrite, graph, config, prepared, problems,
                          [&](GDALDataset& ds, OGRSpatialReference* srs) {
                            std::vector<results::Row> table;
                            for (const auto& r : rows)
                              table.push_back({r.gauge_id, r.reach_id, count(r.reaches), r.parameter,
                                               real(r.multiplier), real(r.lower), real(r.upper),
                                               results::Value{static_cast<std::int64_t>(r.at_bound)}, r.objective,
                                               real(r.objective_before), real(r.objective_after),
                                               real(r.before.nse), real(r.after.nse), real(r.before.kge),
                                               real(r.after.kge), count(r.evaluations), real(r.muskingum_x)});
                            results::writeRowsLayer(path, ds, "calibration", nullptr, wkbNone, calibrationColumns(),
                                                    table, {}, utc_offset_min);
                            std::vector<results::Row> gauge_rows;
                            std::vector<std::pair<double, double>> points;
                            for (const auto& g : gauges) {
                              gauge_rows.push_back(results::gaugeRow(g));
                              points.emplace_back(g.x, g.y);
                            }
                            results::writeRowsLayer(path, ds, "gauges", srs, wkbPoint, results::gaugeColumns(),
                                                    gauge_rows, points, utc_offset_min);
                          },
                          into);
}

}  // namespace reachwise::io
