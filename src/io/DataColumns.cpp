#include "reachwise/io/DataColumns.hpp"

#include <cpl_error.h>
#include <fmt/format.h>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <array>
#include <utility>

#include "reachwise/Error.hpp"
#include "reachwise/io/OutputUnits.hpp"

namespace reachwise::io {

namespace {

using Entry = std::pair<std::string_view, ColumnMeaning>;

// By SI name, with the SI unit in the title (titleIn() gives it in the
// run's output units).
constexpr std::array kMeanings = {
    Entry{"amplitude_ratio", {"amplitude ratio (-)", "Ponce's convergence ratio R1 of the grid for the event's wave (Ponce 1989): the scheme's amplitude over the exact one, 1 for an exact scheme."}},
    Entry{"attenuation_pct", {"peak attenuation (%)", "How much lower the outflow peak is than the peak of everything that entered (top and lateral inflow), in percent of the latter."}},
    Entry{"basin", {"basin number (-)", "Number of the connected part of the network the reach belongs to (0, 1, ...), as messages name it."}},
    Entry{"branch_count", {"branches (-)", "Incoming reaches at a confluence or side-arm return, outgoing at a bifurcation."}},
    Entry{"branch_peak_q", {"branch peak discharge (m³/s)", "Peak discharge the branch brings to the confluence."}},
    Entry{"branch_peak_time", {"branch peak time", "When the branch's peak reaches the confluence (ISO 8601, the run's UTC offset)."}},
    Entry{"branch_reach_id", {"branch reach", "Id of the reach bringing this branch to the confluence."}},
    Entry{"branch_spread_h", {"branch peak spread (h)", "Time between the first and the last branch peak reaching the confluence: small means the floods add up."}},
    Entry{"branches", {"bifurcation shares", "A bifurcation's outgoing reaches and their shares, id:share joined by ';', largest share first (empty for other kinds)."}},
    Entry{"cell_reynolds", {"cell Reynolds number (-)", "D = Q / (T S0 c dx) of the grid at the reference flow: the channel's diffusion length over the sub-reach length."}},
    Entry{"coincidence_ratio", {"peak coincidence ratio (-)", "Combined peak over the sum of the branch peaks: 1 when they arrive together."}},
    Entry{"courant", {"Courant number (-)", "Wave celerity times sub-step over sub-reach length at the reference flow."}},
    Entry{"depth", {"depth (m)", "Normal depth of the outflow at the reach's downstream end."}},
    Entry{"dt_sub_s", {"sub-step (s)", "Time step the reach was routed with."}},
    Entry{"dx_m", {"sub-reach length (m)", "Length of the sub-reaches the reach was cut into."}},
    Entry{"envelope_excursion_pct", {"envelope excursion (%)", "The farthest an outflow sample lies outside the inflow envelope, in percent of the rise."}},
    Entry{"envelope_exceedances", {"envelope exceedances (-)", "Outflow samples outside the inflow envelope by more than 1 % of the rise."}},
    Entry{"event_volume_error_pct", {"event volume error (%)", "Volume error in percent of the event volume above the initial flow."}},
    Entry{"gauge_id", {"gauge", "Id of the gauge."}},
    Entry{"grid_compromise", {"grid compromise", "True when no sub-reach and sub-step pair met every accuracy bound and the best compromise was used."}},
    Entry{"inflow_m3s", {"lake inflow (m³/s)", "Discharge entering the lake."}},
    Entry{"inflow_peak_m3s", {"lake inflow peak (m³/s)", "Peak discharge entering the lake."}},
    Entry{"inflow_peak_q", {"inflow peak discharge (m³/s)", "Peak of everything entering the reach (top and lateral inflow)."}},
    Entry{"inflow_peak_time", {"inflow peak time", "When the inflow peaks (ISO 8601, the run's UTC offset)."}},
    Entry{"key", {"key", "What the row records (run_info: method, start, dt_s, warning, ...)."}},
    Entry{"kge", {"Kling-Gupta efficiency (-)", "Kling-Gupta efficiency (Gupta et al. 2009) of the simulated against the observed discharge: 1 is a perfect fit."}},
    Entry{"kge_alpha", {"KGE alpha (-)", "Ratio of the simulated to the observed standard deviation."}},
    Entry{"kge_beta", {"KGE beta (-)", "Ratio of the simulated to the observed mean."}},
    Entry{"kge_r", {"KGE r (-)", "Linear correlation of the simulated with the observed discharge."}},
    Entry{"kind", {"node kind", "headwater, confluence, side_arm_return, outlet, junction or bifurcation."}},
    Entry{"lag_h", {"lake peak lag (h)", "Time from the lake's inflow peak to its outflow peak."}},
    Entry{"lake_id", {"lake", "Id of the lake or reservoir."}},
    Entry{"level_m", {"lake level (m)", "Water level of the lake."}},
    Entry{"line_id", {"source line", "Id of the line a reach was cut from by topology from geometry (empty when not cut)."}},
    Entry{"member", {"ensemble member", "Name of the ensemble member (the stem of its forcing file) the row belongs to."}},
    Entry{"members", {"ensemble members (-)", "Number of ensemble members with a peak at the reach: those the percentiles count."}},
    Entry{"method", {"routing method", "Method the reach was routed with (vpmc, mc, muskingum or diffusion)."}},
    Entry{"n_obs", {"observations compared (-)", "Number of observed values compared with the run."}},
    Entry{"negative_clamps", {"negative outflows clamped (-)", "Times a negative outflow of the scheme was set to zero."}},
    Entry{"node_id", {"node", "Id of the node (N:<reach id> for the node at the top of a reach)."}},
    Entry{"nse", {"Nash-Sutcliffe efficiency (-)", "Nash-Sutcliffe efficiency (Nash & Sutcliffe 1970): 1 is a perfect fit, 0 no better than the observed mean."}},
    Entry{"nse_peak_weighted", {"peak-weighted NSE (-)", "Nash-Sutcliffe efficiency with each error weighted by the observed discharge (high flows count more)."}},
    Entry{"observed_q", {"observed discharge (m³/s)", "Discharge observed at the gauge (empty where missing)."}},
    Entry{"outflow_m3s", {"lake outflow (m³/s)", "Discharge leaving the lake."}},
    Entry{"outflow_peak_m3s", {"lake outflow peak (m³/s)", "Peak discharge leaving the lake."}},
    Entry{"outflow_peak_time", {"lake outflow peak time", "When the lake's outflow peaks (ISO 8601, the run's UTC offset)."}},
    Entry{"pbias_pct", {"percent bias (%)", "Simulated minus observed volume, in percent of the observed: positive where the run carries too much water."}},
    Entry{"peak_depth", {"peak depth (m)", "Normal depth at the outflow peak."}},
    Entry{"peak_error_pct", {"peak error (%)", "Simulated minus observed peak, in percent of the observed."}},
    Entry{"peak_level_m", {"peak lake level (m)", "Highest water level of the lake."}},
    Entry{"peak_q", {"peak discharge (m³/s)", "Largest discharge: the reach's outflow, or the combined flow at a node."}},
    Entry{"peak_q_p10", {"members' peak discharge, 10th percentile (m³/s)", "10th percentile of the ensemble members' peak discharge at the reach (linear between order statistics, Hyndman & Fan type 7)."}},
    Entry{"peak_q_p50", {"members' peak discharge, median (m³/s)", "Median of the ensemble members' peak discharge at the reach (linear between order statistics, Hyndman & Fan type 7)."}},
    Entry{"peak_q_p90", {"members' peak discharge, 90th percentile (m³/s)", "90th percentile of the ensemble members' peak discharge at the reach (linear between order statistics, Hyndman & Fan type 7)."}},
    Entry{"peak_storage_m3", {"peak lake storage (m³)", "Largest volume stored in the lake."}},
    Entry{"peak_time", {"peak time", "When the discharge peaks (ISO 8601, the run's UTC offset)."}},
    Entry{"peak_time_p10", {"members' peak time, 10th percentile", "10th percentile of the ensemble members' peak times at the reach (ISO 8601, the run's UTC offset)."}},
    Entry{"peak_time_p50", {"members' peak time, median", "Median of the ensemble members' peak times at the reach (ISO 8601, the run's UTC offset)."}},
    Entry{"peak_time_p90", {"members' peak time, 90th percentile", "90th percentile of the ensemble members' peak times at the reach (ISO 8601, the run's UTC offset)."}},
    Entry{"peak_timing_h", {"peak timing error (h)", "Simulated minus observed peak time: positive where the simulated peak comes late."}},
    Entry{"peak_velocity", {"peak velocity (m/s)", "Mean velocity at the outflow peak."}},
    Entry{"phase_ratio", {"phase ratio (-)", "Ponce's convergence ratio R2 of the grid for the event's wave (Ponce 1989): the scheme's celerity over the exact one, 1 for an exact scheme."}},
    Entry{"ponce_number", {"Ponce number (-)", "T S0 (g/d)^(1/2) of the event's wave at the reference flow: below 30 the methods are outside their checked range."}},
    Entry{"q", {"discharge (m³/s)", "Outflow of the reach at its downstream end."}},
    Entry{"reach_id", {"reach", "Id of the reach, as in the network layer."}},
    Entry{"reference_q", {"reference discharge (m³/s)", "Discharge the reach's grid and coefficients were chosen for."}},
    Entry{"simulated_q", {"simulated discharge (m³/s)", "Outflow of the gauge's reach in this run."}},
    Entry{"snap_distance_m", {"snap distance (m)", "Distance from the gauge point to the reach it was placed on."}},
    Entry{"split", {"bifurcation share (-)", "Share of the bifurcating reach's outflow the reach takes (empty when it is no branch)."}},
    Entry{"storage_change_m3", {"storage change (m³)", "Water stored at the end less at the start."}},
    Entry{"storage_m3", {"lake storage (m³)", "Volume stored in the lake."}},
    Entry{"strahler", {"Strahler order (-)", "Strahler stream order of the reach (side arms not counted)."}},
    Entry{"subreaches", {"sub-reaches (-)", "Number of sub-reaches the reach was routed with."}},
    Entry{"substeps", {"sub-steps (-)", "Sub-steps per run time step."}},
    Entry{"surcharge_cells", {"surcharged cells (-)", "Grid cells above a pipe's capacity."}},
    Entry{"time", {"time", "Time of the value (ISO 8601, the run's UTC offset)."}},
    Entry{"travel_time_h", {"peak travel time (h)", "Time from the inflow peak to the outflow peak."}},
    Entry{"value", {"value", "The recorded value, as text."}},
    Entry{"velocity", {"velocity (m/s)", "Mean velocity of the outflow at the reach's downstream end."}},
    Entry{"volume_error_m3", {"volume error (m³)", "Simulated minus observed volume (gauges), or what entered less what left and what is stored (lakes)."}},
    Entry{"volume_error_pct", {"volume error (%)", "What entered less what left and what is stored, in percent of what entered."}},
    Entry{"volume_in_m3", {"volume in at the top (m³)", "Volume that entered at the top (of the reach or lake)."}},
    Entry{"volume_lateral_m3", {"lateral volume (m³)", "Volume that entered along the reach."}},
    Entry{"volume_out_m3", {"volume out (m³)", "Volume that left at the downstream end (of the reach or lake)."}},
    Entry{"x", {"Muskingum X (-)", "Weighting factor X of the reach at the reference flow."}},
    Entry{"x_clamp_cause", {"X clamp cause", "Why X was clamped: surcharge, bank_full, short, flat or flow_range (empty without X clamps)."}},
    Entry{"x_clamps", {"X clamps (-)", "Cells where X was clamped to keep the scheme stable."}},
};

/// 'text' with quotes doubled (SQL string literal).
std::string literal(std::string_view text) {
  std::string out = "'";
  for (const char c : text) {
    out += c;
    if (c == '\'') out += '\'';
  }
  return out + "'";
}

void execute(GDALDataset& ds, const std::string& file, const std::string& table, const std::string& sql) {
  CPLErrorReset();
  OGRLayer* result = ds.ExecuteSQL(sql.c_str(), nullptr, nullptr);
  if (result) ds.ReleaseResultSet(result);
  if (CPLGetLastErrorType() >= CE_Failure) {
    InputLocation at;
    at.file = file;
    at.layer = table;
    throw InputError(at, std::string("cannot record the column descriptions: ") + CPLGetLastErrorMsg());
  }
}

/// `title` with its unit in `system`: "(m³/s)", "(m³)", "(m)", "(m/s)" as
/// io::unitSymbol gives them.
std::string titleIn(std::string_view title, units::System system) {
  std::string out(title);
  for (const Quantity q : {Quantity::Discharge, Quantity::Volume, Quantity::Length, Quantity::Velocity}) {
    const std::string si = fmt::format("({})", unitSymbol(units::System::SI, q));
    if (const auto at = out.rfind(si); at != std::string::npos && at + si.size() == out.size())
      return out.replace(at, si.size(), fmt::format("({})", unitSymbol(system, q)));
  }
  return out;
}

}  // namespace

const ColumnMeaning* columnMeaning(std::string_view column) {
  const auto it = std::find_if(kMeanings.begin(), kMeanings.end(), [&](const Entry& e) { return e.first == column; });
  return it != kMeanings.end() ? &it->second : nullptr;
}

std::string columnTitle(std::string_view column, units::System system) {
  const ColumnMeaning* m = columnMeaning(siFieldName(column));
  return m ? titleIn(m->title, system) : std::string();
}

void describeColumns(GDALDataset& ds, const std::string& file, const std::string& table, units::System system) {
  OGRLayer* layer = ds.GetLayerByName(table.c_str());
  if (!layer) return;
  // The tables and extension rows of the schema extension, as the
  // GeoPackage standard defines them (1.3, Annex F.9).
  execute(ds, file, table,
          "CREATE TABLE IF NOT EXISTS gpkg_data_columns (table_name TEXT NOT NULL, column_name TEXT NOT NULL, "
          "name TEXT, title TEXT, description TEXT, mime_type TEXT, constraint_name TEXT, "
          "CONSTRAINT pk_gdc PRIMARY KEY (table_name, column_name), "
          "CONSTRAINT gdc_tn UNIQUE (table_name, name))");
  execute(ds, file, table,
          "CREATE TABLE IF NOT EXISTS gpkg_data_column_constraints (constraint_name TEXT NOT NULL, "
          "constraint_type TEXT NOT NULL, value TEXT, min NUMERIC, min_is_inclusive BOOLEAN, max NUMERIC, "
          "max_is_inclusive BOOLEAN, description TEXT, "
          "CONSTRAINT gdcc_ntv UNIQUE (constraint_name, constraint_type, value))");
  execute(ds, file, table,
          "CREATE TABLE IF NOT EXISTS gpkg_extensions (table_name TEXT, column_name TEXT, extension_name TEXT NOT "
          "NULL, definition TEXT NOT NULL, scope TEXT NOT NULL, CONSTRAINT ge_tce UNIQUE (table_name, column_name, "
          "extension_name))");
  for (const char* t : {"gpkg_data_columns", "gpkg_data_column_constraints"})
    execute(ds, file, table,
            fmt::format("INSERT INTO gpkg_extensions (table_name, column_name, extension_name, definition, scope) "
                        "SELECT {0}, NULL, 'gpkg_schema', 'http://www.geopackage.org/spec/#extension_schema', "
                        "'read-write' WHERE NOT EXISTS (SELECT 1 FROM gpkg_extensions WHERE table_name = {0} AND "
                        "extension_name = 'gpkg_schema')",
                        literal(t)));
  OGRFeatureDefn* defn = layer->GetLayerDefn();
  std::string rows;
  for (int i = 0; i < defn->GetFieldCount(); ++i) {
    const std::string column = defn->GetFieldDefn(i)->GetNameRef();
    const ColumnMeaning* m = columnMeaning(siFieldName(column));
    if (!m) continue;
    rows += fmt::format("{}({}, {}, {}, {}, {})", rows.empty() ? "" : ", ", literal(table), literal(column),
                        literal(column), literal(titleIn(m->title, system)), literal(m->description));
  }
  if (rows.empty()) return;
  execute(ds, file, table,
          "INSERT OR REPLACE INTO gpkg_data_columns (table_name, column_name, name, title, description) VALUES " +
              rows);
}

}  // namespace reachwise::io
