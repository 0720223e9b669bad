// Gauges in the CSV folder (`gauges.csv`, `gauge_series.csv`) and in the
// CF-NetCDF series file (a `gauge` dimension, `observed_q` and
// `simulated_q`), equal to what the run's summary holds; and an existing
// gauge file refused before routing. The observations are the run's own
// outflow at R13 scaled by 1.25, every seventh value missing, so the skill
// also follows from the definitions (docs/methods.md §10): KGE's β = α =
// 1/1.25 = 0.8 for a scaled series (Gupta et al. 2009, Eq. 6-8).
#include <gtest/gtest.h>

#include <netcdf.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <memory>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/io/Gdal.hpp"
#include "reachwise/run/Route.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

run::RouteRequest request() {
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.forcing.inflow = kSample + "inflow.csv";
  r.forcing.lateral = kSample + "lateral.csv";
  return r;
}

std::vector<std::string> splitCsv(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  for (char c : line) {
    if (c == ',') cells.push_back(std::move(cell)), cell.clear();
    else cell += c;
  }
  cells.push_back(cell);
  return cells;
}

std::vector<std::vector<std::string>> readCsv(const fs::path& p) {
  std::ifstream in(p);
  std::vector<std::vector<std::string>> rows;
  for (std::string line; std::getline(in, line);) rows.push_back(splitCsv(line));
  return rows;
}

/// hydrographs.csv of a first run (R13 only) as long-form observations
/// × 1.25, every seventh value NA. Returns how many were given.
std::size_t writeObserved(const fs::path& hydrographs, const fs::path& out) {
  const auto rows = readCsv(hydrographs);
  std::ofstream obs(out);
  obs << "reach_id,time,discharge\n";
  std::size_t present = 0;
  for (std::size_t n = 1; n < rows.size(); ++n) {
    const bool missing = n % 7 == 3;
    present += !missing;
    obs << rows[n][0] << ',' << rows[n][1] << ',' << (missing ? std::string("NA") : std::to_string(std::stod(rows[n][2]) * 1.25))
        << '\n';
  }
  return present;
}

std::string textAtt(int nc, int var, const char* name) {
  std::size_t len = 0;
  if (nc_inq_attlen(nc, var, name, &len) != NC_NOERR) return "<missing>";
  std::string s(len, '\0');
  nc_get_att_text(nc, var, name, s.data());
  return s;
}

/// A first run writing R13's hydrograph, and observations made from it.
struct Observed {
  fs::path file;
  std::size_t present = 0;
};

Observed observed(const testsupport::TempDir& tmp) {
  run::RouteRequest first = request();
  first.outputs.csv_dir = tmp.file("first");
  first.outputs.hydrographs = "R13";
  run::route(first);
  Observed o{tmp.file("obs.csv"), 0};
  o.present = writeObserved(fs::path(first.outputs.csv_dir) / "hydrographs.csv", o.file);
  return o;
}

double cellValue(const std::string& cell) { return cell.empty() ? std::nan("") : std::stod(cell); }

}  // namespace

TEST(GaugeOutputs, CsvTablesHoldTheGaugesTheSummaryHolds) {
  const testsupport::TempDir tmp;
  const Observed obs = observed(tmp);
  run::RouteRequest r = request();
  r.gauges.observed = obs.file.string();
  r.outputs.gpkg = tmp.file("out.gpkg");
  r.outputs.csv_dir = tmp.file("csv");
  r.outputs.hydrographs = "R13";
  const run::RouteSummary s = run::route(r);
  ASSERT_EQ(s.gauges.gauges.size(), 1u);
  const auto& gauge = s.gauges.gauges[0];
  const auto& skill = s.gauge_scores.at(0);
  const std::size_t steps = s.results.axis.steps;

  // gauges.csv: the `gauges` layer's fields in its order, then x, y.
  io::ensureGdal();
  std::unique_ptr<GDALDataset> ds(GDALDataset::Open(r.outputs.gpkg.c_str(), GDAL_OF_VECTOR));
  ASSERT_TRUE(ds);
  OGRFeatureDefn* layer = ds->GetLayerByName("gauges")->GetLayerDefn();
  const auto table = readCsv(fs::path(r.outputs.csv_dir) / "gauges.csv");
  ASSERT_EQ(table.size(), 2u);
  const auto& header = table[0];
  ASSERT_EQ(header.size(), static_cast<std::size_t>(layer->GetFieldCount()) + 2);
  for (int i = 0; i < layer->GetFieldCount(); ++i) EXPECT_EQ(header[i], layer->GetFieldDefn(i)->GetNameRef());
  EXPECT_EQ(header[header.size() - 2], "x");
  EXPECT_EQ(header.back(), "y");
  const auto column = [&](const std::string& name) {
    const auto at = std::find(header.begin(), header.end(), name);
    EXPECT_NE(at, header.end()) << name;
    return table[1].at(static_cast<std::size_t>(at - header.begin()));
  };
  EXPECT_EQ(column("gauge_id"), "R13");
  EXPECT_EQ(column("reach_id"), "R13");
  EXPECT_EQ(column("snap_distance_m"), "") << "the reach was named: no snap";
  EXPECT_EQ(std::stoll(column("n_obs")), static_cast<long long>(skill.n_obs));
  // Written with fmt's shortest round-trip form: equal to the double.
  EXPECT_EQ(std::stod(column("nse")), skill.nse);
  EXPECT_EQ(std::stod(column("kge")), skill.kge);
  EXPECT_EQ(std::stod(column("kge_beta")), skill.kge_beta);
  EXPECT_EQ(std::stod(column("pbias_pct")), skill.pbias_pct);
  EXPECT_EQ(std::stod(column("peak_timing_h")), skill.peak_timing_h);
  // Without a gauge layer the gauge stands at its reach's downstream end.
  EXPECT_EQ(std::stod(column("x")), s.plan.bottom[gauge.reach].x);
  EXPECT_EQ(std::stod(column("y")), s.plan.bottom[gauge.reach].y);
  // Independent of the program: the observations were given to 6 decimals
  // and NA is skipped, so n_obs is their count and β = 0.8 within 1e-5
  // (KGE's β for a series scaled by 1.25, Gupta et al. 2009).
  EXPECT_EQ(skill.n_obs, obs.present);
  EXPECT_NEAR(std::stod(column("kge_beta")), 0.8, 1e-5);

  // gauge_series.csv: every step; observed empty where there is none.
  const auto series = readCsv(fs::path(r.outputs.csv_dir) / "gauge_series.csv");
  ASSERT_EQ(series.size(), steps + 1);
  EXPECT_EQ(series[0], (std::vector<std::string>{"gauge_id", "time", "observed_q", "simulated_q"}));
  const auto hydrographs = readCsv(fs::path(r.outputs.csv_dir) / "hydrographs.csv");
  ASSERT_EQ(hydrographs.size(), steps + 1);
  std::size_t given = 0;
  for (std::size_t n = 0; n < steps; ++n) {
    const auto& row = series[n + 1];
    ASSERT_EQ(row.size(), 4u);
    EXPECT_EQ(row[0], "R13");
    EXPECT_EQ(row[1], hydrographs[n + 1][1]) << "times as in hydrographs.csv";
    const double o = cellValue(row[2]);
    if (std::isnan(gauge.observed[n])) EXPECT_TRUE(std::isnan(o)) << n;
    else EXPECT_EQ(o, gauge.observed[n]) << n;
    given += !std::isnan(o);
    EXPECT_EQ(std::stod(row[3]), s.gauge_outflow[0][n]) << n;
    // The simulated series is the reach's own hydrograph.
    EXPECT_EQ(row[3], hydrographs[n + 1][2]) << n;
  }
  EXPECT_EQ(given, obs.present);
}

TEST(GaugeOutputs, NetcdfSeriesFileHoldsTheGaugesOnTheirOwnDimension) {
  const testsupport::TempDir tmp;
  const Observed obs = observed(tmp);
  run::RouteRequest r = request();
  r.gauges.observed = obs.file.string();
  r.outputs.series_nc = tmp.file("series.nc");
  r.outputs.hydrographs = "R13";
  const run::RouteSummary s = run::route(r);
  ASSERT_EQ(s.gauges.gauges.size(), 1u);
  const std::size_t steps = s.results.axis.steps;

  int nc = 0, dim = 0, var = 0, time_dim = 0;
  ASSERT_EQ(nc_open(r.outputs.series_nc.c_str(), NC_NOWRITE, &nc), NC_NOERR);
  ASSERT_EQ(nc_inq_dimid(nc, "gauge", &dim), NC_NOERR);
  ASSERT_EQ(nc_inq_dimid(nc, "time", &time_dim), NC_NOERR);
  std::size_t n_gauge = 0;
  nc_inq_dimlen(nc, dim, &n_gauge);
  EXPECT_EQ(n_gauge, 1u);
  ASSERT_EQ(nc_inq_varid(nc, "gauge_id", &var), NC_NOERR);
  char* id = nullptr;
  ASSERT_EQ(nc_get_var_string(nc, var, &id), NC_NOERR);
  EXPECT_STREQ(id, "R13");
  nc_free_string(1, &id);
  // CF-1.8 §9.5: the station id variable carries cf_role timeseries_id.
  EXPECT_EQ(textAtt(nc, var, "cf_role"), "timeseries_id");

  const std::vector<double>* want[] = {&s.gauges.gauges[0].observed, &s.gauge_outflow[0]};
  const char* const names[] = {"observed_q", "simulated_q"};
  for (int c = 0; c < 2; ++c) {
    ASSERT_EQ(nc_inq_varid(nc, names[c], &var), NC_NOERR) << names[c];
    // CF-1.8 §3.1, §3.2: UDUNITS units and a long_name; §5 coordinates;
    // (time, gauge), time first (§2.4).
    EXPECT_EQ(textAtt(nc, var, "units"), "m3 s-1") << names[c];
    EXPECT_NE(textAtt(nc, var, "long_name"), "<missing>") << names[c];
    EXPECT_EQ(textAtt(nc, var, "coordinates"), "gauge_id") << names[c];
    int ndims = 0, dims[2] = {-1, -1};
    ASSERT_EQ(nc_inq_varndims(nc, var, &ndims), NC_NOERR);
    ASSERT_EQ(ndims, 2);
    nc_inq_vardimid(nc, var, dims);
    EXPECT_EQ(dims[0], time_dim);
    EXPECT_EQ(dims[1], dim);
    double fill = 0;
    ASSERT_EQ(nc_get_att_double(nc, var, "_FillValue", &fill), NC_NOERR);
    std::vector<double> got(steps);
    ASSERT_EQ(nc_get_var_double(nc, var, got.data()), NC_NOERR);
    std::size_t missing = 0;
    for (std::size_t n = 0; n < steps; ++n) {
      // A missing observation is the _FillValue (CF-1.8 §2.5.1), not NaN.
      if (std::isnan((*want[c])[n])) {
        EXPECT_EQ(got[n], fill) << names[c] << " " << n;
        ++missing;
      } else {
        EXPECT_EQ(got[n], (*want[c])[n]) << names[c] << " " << n;
      }
    }
    if (c == 0) EXPECT_EQ(steps - missing, obs.present);
    else EXPECT_EQ(missing, 0u);
  }
  // The simulated series is the reach's own outflow in the same file.
  int reach_out = 0;
  ASSERT_EQ(nc_inq_varid(nc, "outflow", &reach_out), NC_NOERR);
  std::vector<double> outflow(steps), simulated(steps);
  nc_get_var_double(nc, reach_out, outflow.data());
  nc_inq_varid(nc, "simulated_q", &var);
  nc_get_var_double(nc, var, simulated.data());
  EXPECT_EQ(outflow, simulated);
  nc_close(nc);
}

TEST(GaugeOutputs, AnExistingGaugeFileStopsTheRunBeforeAnyOutputIsLeft) {
  const testsupport::TempDir tmp;
  const Observed obs = observed(tmp);
  for (const char* name : {"gauges.csv", "gauge_series.csv"}) {
    run::RouteRequest r = request();
    r.gauges.observed = obs.file.string();
    r.outputs.gpkg = tmp.file(std::string("out-") + name + ".gpkg");
    r.outputs.csv_dir = tmp.file(std::string("csv-") + name);
    fs::create_directories(r.outputs.csv_dir);
    std::ofstream(fs::path(r.outputs.csv_dir) / name) << "kept\n";
    try {
      run::route(r);
      ADD_FAILURE() << "an existing " << name << " was replaced";
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find(name), std::string::npos) << e.what();
    }
    EXPECT_FALSE(fs::exists(r.outputs.gpkg));
    std::vector<std::string> left;
    for (const auto& e : fs::directory_iterator(r.outputs.csv_dir)) left.push_back(e.path().filename().string());
    EXPECT_EQ(left, std::vector<std::string>{name});
    std::ifstream kept(fs::path(r.outputs.csv_dir) / name);
    std::string line;
    std::getline(kept, line);
    EXPECT_EQ(line, "kept");
    // With overwriting asked for, the file is replaced.
    r.outputs.overwrite = true;
    EXPECT_NO_THROW(run::route(r));
    EXPECT_EQ(readCsv(fs::path(r.outputs.csv_dir) / name).at(0).at(0), "gauge_id");
  }
}
