// Output units (`route --units si|us`): the sample network routed from SI
// input and from the same network and forcing in US customary units
// (widths, depths and discharges converted with the foot of exactly
// 0.3048 m: NIST Handbook 44, Appendix C, the international foot of 1959).
// With US customary outputs every field with a unit equals the SI run's
// value times the exact factor (1/0.3048 for lengths and velocities,
// 1/0.3048³ for discharges and volumes), and dimensionless fields are
// unchanged; `--units si` on US input gives the SI run; the default
// follows the input. The records are read back with the netCDF API
// (CF `units` attributes), with GDAL (gpkg_data_columns, run_info) and as
// CSV text; GDAL's GeoPackage validator accepts a US customary GeoPackage.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <netcdf.h>
#include <ogrsf_frmts.h>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <unistd.h>

#include "reachwise/io/Gdal.hpp"
#include "support/Cli.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";
const std::string kValidator = "/usr/lib/python3/dist-packages/osgeo_utils/samples/validate_gpkg.py";

constexpr double kFoot = 0.3048;                      // m, exact by definition (NIST)
constexpr double kCubicFoot = kFoot * kFoot * kFoot;  // m³

/// The factor from SI to US customary of a US customary output field, by
/// name, written out here apart from the program's own list: discharges
/// and volumes 1/0.3048³, lengths and velocities 1/0.3048; 1 for the rest.
double usFactor(const std::string& name) {
  static const std::set<std::string> discharge = {"peak_q", "inflow_peak_q", "reference_q", "branch_peak_q", "q",
                                                  "observed_q", "simulated_q", "inflow_peak_cfs",
                                                  "outflow_peak_cfs", "inflow_cfs", "outflow_cfs"};
  static const std::set<std::string> length = {"peak_depth", "depth", "peak_velocity", "velocity"};
  if (discharge.count(name)) return 1 / kCubicFoot;
  if (length.count(name)) return 1 / kFoot;
  const auto ends = [&](const char* tail) {
    const std::string t(tail);
    return name.size() > t.size() && name.compare(name.size() - t.size(), t.size(), t) == 0;
  };
  if (ends("_ft3")) return 1 / kCubicFoot;
  if (ends("_ft")) return 1 / kFoot;
  return 1;
}

/// The SI name of a US customary field (`_ft3` -> `_m3`, `_cfs` -> `_m3s`,
/// `_ft` -> `_m`), as docs/formats.md states the rule.
std::string siName(const std::string& name) {
  for (const auto& [us, si] : {std::pair{"_ft3", "_m3"}, std::pair{"_cfs", "_m3s"}, std::pair{"_ft", "_m"}}) {
    const std::string u(us);
    if (name.size() > u.size() && name.compare(name.size() - u.size(), u.size(), u) == 0)
      return name.substr(0, name.size() - u.size()) + si;
  }
  return name;
}

struct Csv {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
};

/// A CSV file as the writers write it (a quoted cell, e.g. WKT, may hold commas).
Csv readCsv(const fs::path& p) {
  std::ifstream in(p);
  Csv csv;
  std::string line;
  bool first = true;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::string cell;
    bool quoted = false;
    for (const char c : line) {
      if (c == '"') quoted = !quoted;
      else if (c == ',' && !quoted) {
        cells.push_back(cell);
        cell.clear();
      } else cell += c;
    }
    cells.push_back(cell);
    if (first) csv.header = cells;
    else csv.rows.push_back(cells);
    first = false;
  }
  // By the first two cells (id, then time or branch): the hydrographs come
  // in the order the reaches finish, which threads decide.
  std::stable_sort(csv.rows.begin(), csv.rows.end(), [](const auto& a, const auto& b) {
    return std::make_pair(a[0], a.size() > 1 ? a[1] : "") < std::make_pair(b[0], b.size() > 1 ? b[1] : "");
  });
  return csv;
}

bool number(const std::string& s, double& v) {
  if (s.empty()) return false;
  char* end = nullptr;
  v = std::strtod(s.c_str(), &end);
  return end == s.c_str() + s.size();
}

/// Largest relative difference over `us` (a table in US customary units, or
/// SI when `factor_of` gives 1) against `si` times each field's factor,
/// relative to the largest magnitude of that field (a field near zero in
/// one row, e.g. a storage change, is judged on the field's scale).
/// Text cells must be equal; `skip` names fields not compared.
double largestDifference(const Csv& si, const Csv& us, bool to_us, const std::set<std::string>& skip = {}) {
  EXPECT_EQ(si.rows.size(), us.rows.size());
  EXPECT_EQ(si.header.size(), us.header.size());
  if (si.rows.size() != us.rows.size() || si.header.size() != us.header.size()) return INFINITY;
  double worst = 0;
  for (std::size_t c = 0; c < us.header.size(); ++c) {
    const std::string& name = us.header[c];
    EXPECT_EQ(to_us ? siName(name) : name, si.header[c]) << "column " << c;
    if (skip.count(name)) continue;
    const double factor = to_us ? usFactor(name) : 1.0;
    double scale = 0;
    for (const auto& row : si.rows)
      if (double v; number(row[c], v)) scale = std::max(scale, std::abs(v * factor));
    for (std::size_t r = 0; r < us.rows.size(); ++r) {
      double a = 0, b = 0;
      if (number(si.rows[r][c], a) && number(us.rows[r][c], b)) {
        if (scale > 0) worst = std::max(worst, std::abs(b - a * factor) / scale);
      } else {
        EXPECT_EQ(si.rows[r][c], us.rows[r][c]) << name << " row " << r;
      }
    }
  }
  return worst;
}

/// Writes `to` as `from` with the values of columns `numeric` (indexes;
/// empty: every column but the first) divided by `divisor`, 17 digits.
void scaleCsv(const fs::path& from, const fs::path& to, const std::set<std::size_t>& numeric, double divisor) {
  const Csv in = readCsv(from);
  std::ofstream out(to);
  for (std::size_t c = 0; c < in.header.size(); ++c) out << (c ? "," : "") << in.header[c];
  out << '\n';
  for (const auto& row : in.rows) {
    for (std::size_t c = 0; c < row.size(); ++c) {
      double v = 0;
      const bool scaled = numeric.empty() ? c > 0 : numeric.count(c) > 0;
      out << (c ? "," : "") << (scaled && number(row[c], v) ? fmt::format("{:.17g}", v / divisor) : row[c]);
    }
    out << '\n';
  }
}

/// The sample network and forcing in US customary units in `dir`:
/// network.gpkg (widths and depths in ft), inflow.csv and lateral.csv (ft³/s),
/// us.toml (`[network] units = "us"`).
void writeUsInput(const fs::path& dir) {
  fs::copy_file(kSample + "network.gpkg", dir / "network.gpkg");
  reachwise::io::ensureGdal();
  {
    GDALDatasetUniquePtr ds(GDALDataset::Open((dir / "network.gpkg").c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
    ASSERT_TRUE(ds);
    CPLErrorReset();
    ds->ExecuteSQL("UPDATE reaches SET bottom_width = bottom_width / 0.3048, diameter = diameter / 0.3048, "
                   "bank_depth = bank_depth / 0.3048, floodplain_width = floodplain_width / 0.3048",
                   nullptr, nullptr);
    ASSERT_LT(CPLGetLastErrorType(), CE_Failure) << CPLGetLastErrorMsg();
  }
  scaleCsv(kSample + "inflow.csv", dir / "inflow.csv", {}, kCubicFoot);
  scaleCsv(kSample + "lateral.csv", dir / "lateral.csv", {2}, kCubicFoot);
  std::ofstream(dir / "us.toml") << "[network]\nunits = \"us\"\n";
  std::ofstream(dir / "us-out-si.toml") << "[network]\nunits = \"us\"\n\n[route]\nunits = \"si\"\n";
}

std::string runInfoValue(const fs::path& csv_dir, const std::string& key) {
  for (const auto& row : readCsv(csv_dir / "run_info.csv").rows)
    if (row.size() == 2 && row[0] == key) return row[1];
  return "<missing>";
}

std::string textAtt(int nc, const char* var_name, const char* att) {
  int var = 0;
  if (nc_inq_varid(nc, var_name, &var) != NC_NOERR) return "<no variable>";
  std::size_t len = 0;
  if (nc_inq_attlen(nc, var, att, &len) != NC_NOERR) return "<missing>";
  std::string s(len, '\0');
  nc_get_att_text(nc, var, att, s.data());
  return s;
}

std::vector<double> ncValues(int nc, const char* var_name) {
  int var = 0, ndims = 0, dims[NC_MAX_VAR_DIMS];
  if (nc_inq_varid(nc, var_name, &var) != NC_NOERR) return {};
  nc_inq_varndims(nc, var, &ndims);
  nc_inq_vardimid(nc, var, dims);
  std::size_t n = 1;
  for (int d = 0; d < ndims; ++d) {
    std::size_t len = 0;
    nc_inq_dimlen(nc, dims[d], &len);
    n *= len;
  }
  std::vector<double> v(n);
  nc_get_var_double(nc, var, v.data());
  return v;
}

/// table.column -> title from gpkg_data_columns, and run_info's `units`.
std::map<std::string, std::string> titles(const fs::path& gpkg, std::string* run_info_units = nullptr) {
  reachwise::io::ensureGdal();
  std::map<std::string, std::string> out;
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) return out;
  if (OGRLayer* rows = ds->ExecuteSQL("SELECT table_name, column_name, title FROM gpkg_data_columns", nullptr, nullptr)) {
    for (auto& f : *rows) out[std::string(f->GetFieldAsString(0)) + "." + f->GetFieldAsString(1)] = f->GetFieldAsString(2);
    ds->ReleaseResultSet(rows);
  }
  if (run_info_units)
    if (OGRLayer* rows = ds->ExecuteSQL("SELECT value FROM run_info WHERE key = 'units'", nullptr, nullptr)) {
      for (auto& f : *rows) *run_info_units = f->GetFieldAsString(0);
      ds->ReleaseResultSet(rows);
    }
  return out;
}

/// reach_id -> field value of the `reaches` layer of `gpkg`.
std::map<std::string, double> reachField(const fs::path& gpkg, const std::string& layer, const std::string& field) {
  std::map<std::string, double> out;
  GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) return out;
  OGRLayer* l = ds->GetLayerByName(layer.c_str());
  if (!l || l->GetLayerDefn()->GetFieldIndex(field.c_str()) < 0) return out;
  for (auto& f : *l) out[f->GetFieldAsString("reach_id")] = f->GetFieldAsDouble(field.c_str());
  return out;
}

class RouteUnits : public ::testing::Test {
protected:
  // The runs are made once per process, by the first test that runs (the
  // helpers name their files after the running test).
  void SetUp() override {
    if (dir_) return;
    dir_ = new fs::path(fs::temp_directory_path() / ("reachwise_RouteUnits_" + std::to_string(::getpid())));
    fs::remove_all(*dir_);
    fs::create_directories(*dir_);
    const fs::path d = *dir_;
    fs::create_directories(d / "us-input");
    writeUsInput(d / "us-input");
    const fs::path us = d / "us-input";
    const std::string si_in = kSample + "network.gpkg --inflow " + kSample + "inflow.csv --lateral " + kSample +
                              "lateral.csv";
    const std::string us_in = (us / "network.gpkg").string() + " --inflow " + (us / "inflow.csv").string() +
                              " --lateral " + (us / "lateral.csv").string();
    const auto outputs = [&](const std::string& name) {
      return " --out " + (d / (name + ".gpkg")).string() + " --csv " + (d / name).string() + " --series " +
             (d / (name + ".nc")).string() + " --hydrographs all";
    };
    // SI input, SI outputs (default) and US customary outputs.
    runs_["si"] = testsupport::runReachwise("route " + si_in + outputs("si") + " --report " + (d / "si-report").string());
    runs_["si-to-us"] = testsupport::runReachwise("route " + si_in + outputs("si-to-us") + " --units us --report " +
                                                  (d / "si-to-us-report").string());
    // US customary input: default (US customary), and SI asked for in the run file.
    runs_["us"] = testsupport::runReachwise("route " + us_in + " --config " + (us / "us.toml").string() + outputs("us"));
    runs_["us-to-si"] = testsupport::runReachwise("route " + us_in + " --config " +
                                                  (us / "us-out-si.toml").string() + outputs("us-to-si"));
    // With lakes and gauges, SI and US customary outputs.
    const std::string more = " --lakes " + kSample + "lakes.gpkg --observed " + kSample + "observed.csv --gauges " +
                             kSample + "gauges.gpkg";
    runs_["lakes-si"] = testsupport::runReachwise("route " + si_in + more + outputs("lakes-si") + " --quiet");
    runs_["lakes-us"] =
        testsupport::runReachwise("route " + si_in + more + outputs("lakes-us") + " --quiet --units us");
  }
  static void TearDownTestSuite() {
    if (!dir_) return;
    std::error_code ec;
    fs::remove_all(*dir_, ec);
    delete dir_;
    dir_ = nullptr;
  }
  static fs::path path(const std::string& name) { return *dir_ / name; }
  static const testsupport::CliRun& run(const std::string& name) { return runs_.at(name); }

  static fs::path* dir_;
  static std::map<std::string, testsupport::CliRun> runs_;
};

fs::path* RouteUnits::dir_ = nullptr;
std::map<std::string, testsupport::CliRun> RouteUnits::runs_;

// Converting SI results changes nothing but the unit: one division by the
// exact factor in the program, one multiplication here, and the factor's
// own rounding: a few units in the last place (2.2e-16 each).
constexpr double kConversionTolerance = 1e-15;
// US customary input is converted to SI by the reader (x ft · 0.3048) from
// values written here as x m / 0.3048 with 17 digits: each input differs
// from the SI run's by a unit or two in the last place. The iterative parts
// of routing (normal depth, peak interpolation) stop at their own
// tolerances, so such a difference moves results by more than round-off:
// measured at up to 1e-11 of a field's largest value for discharges and
// depths, 4e-10 for the peak travel time. 1e-8 is far below anything a
// user reads and above those.
constexpr double kRoundTripTolerance = 1e-8;
// Fields left out of the comparison across inputs (they are compared,
// unchanged, across output units above): the volume balance errors, which
// are round-off themselves (about 1e-13 %), and the event-wave diagnostics
// (Ponce number, amplitude and phase ratios), which depend on the event's
// time scale read from sampled series and so jump with the input's last
// digit (measured: Ponce number 2.7 %, ratios 3e-4).
const std::set<std::string> kRoundOffFields = {"volume_error_pct", "event_volume_error_pct", "ponce_number",
                                               "amplitude_ratio", "phase_ratio"};

}  // namespace

TEST_F(RouteUnits, EveryRunSucceeds) {
  for (const auto& [name, r] : runs_) EXPECT_EQ(r.code, 0) << name << ": " << r.err;
}

TEST_F(RouteUnits, UsCustomaryOutputsAreTheSiResultsTimesTheExactFactor) {
  for (const char* table : {"reaches.csv", "nodes.csv", "confluence_branches.csv", "hydrographs.csv"}) {
    const Csv si = readCsv(path("si") / table), us = readCsv(path("si-to-us") / table);
    ASSERT_FALSE(si.rows.empty()) << table;
    EXPECT_LE(largestDifference(si, us, true), kConversionTolerance) << table;
  }
  // The unit-suffixed fields carry the unit they hold.
  const Csv us = readCsv(path("si-to-us") / "reaches.csv");
  for (const char* name : {"volume_in_ft3", "volume_lateral_ft3", "volume_out_ft3", "storage_change_ft3", "dx_ft"})
    EXPECT_NE(std::find(us.header.begin(), us.header.end(), name), us.header.end()) << name;
  // One value by hand: the outlet's peak, 1 m³/s = 35.3146667 ft³/s.
  const Csv si = readCsv(path("si") / "reaches.csv");
  double a = 0, b = 0;
  ASSERT_EQ(si.header[1], "peak_q");
  ASSERT_TRUE(number(si.rows[0][1], a) && number(us.rows[0][1], b));
  EXPECT_NEAR(b, a * 35.314666721488590, 1e-12 * b);
}

TEST_F(RouteUnits, LakesAndGaugesFollowTheUnits) {
  for (const char* table : {"lakes.csv", "lake_series.csv", "gauges.csv", "gauge_series.csv", "reaches.csv"}) {
    const Csv si = readCsv(path("lakes-si") / table), us = readCsv(path("lakes-us") / table);
    ASSERT_FALSE(si.rows.empty()) << table;
    EXPECT_LE(largestDifference(si, us, true), kConversionTolerance) << table;
  }
  const Csv lakes = readCsv(path("lakes-us") / "lake_series.csv");
  EXPECT_EQ(lakes.header, (std::vector<std::string>{"lake_id", "time", "level_ft", "storage_ft3", "inflow_cfs",
                                                    "outflow_cfs"}));
  int nc = 0;
  ASSERT_EQ(nc_open(path("lakes-us.nc").c_str(), NC_NOWRITE, &nc), NC_NOERR);
  EXPECT_EQ(textAtt(nc, "lake_level", "units"), "ft");
  EXPECT_EQ(textAtt(nc, "lake_storage", "units"), "ft3");
  EXPECT_EQ(textAtt(nc, "lake_outflow", "units"), "ft3 s-1");
  EXPECT_EQ(textAtt(nc, "observed_q", "units"), "ft3 s-1");
  EXPECT_EQ(textAtt(nc, "simulated_q", "units"), "ft3 s-1");
  nc_close(nc);
}

TEST_F(RouteUnits, UsCustomaryInputGivesTheSiRunInEitherUnits) {
  // Default: the input's units (US customary) ...
  EXPECT_EQ(runInfoValue(path("us"), "units"), "us");
  EXPECT_EQ(runInfoValue(path("si"), "units"), "si");
  EXPECT_EQ(runInfoValue(path("si-to-us"), "units"), "us");
  EXPECT_EQ(runInfoValue(path("us-to-si"), "units"), "si");
  for (const char* table : {"reaches.csv", "nodes.csv", "confluence_branches.csv", "hydrographs.csv"}) {
    const Csv si = readCsv(path("si") / table);
    // ... equal to the SI run times the factor; `--units si` (here the run
    // file's `units`) gives the SI run.
    EXPECT_LE(largestDifference(si, readCsv(path("us") / table), true, kRoundOffFields), kRoundTripTolerance)
        << table;
    EXPECT_LE(largestDifference(si, readCsv(path("us-to-si") / table), false, kRoundOffFields), kRoundTripTolerance)
        << table;
  }
}

TEST_F(RouteUnits, NetcdfUnitsAttributesAndValues) {
  int si = 0, us = 0;
  ASSERT_EQ(nc_open(path("si.nc").c_str(), NC_NOWRITE, &si), NC_NOERR);
  ASSERT_EQ(nc_open(path("us.nc").c_str(), NC_NOWRITE, &us), NC_NOERR);
  EXPECT_EQ(textAtt(si, "outflow", "units"), "m3 s-1");
  EXPECT_EQ(textAtt(si, "depth", "units"), "m");
  EXPECT_EQ(textAtt(si, "velocity", "units"), "m s-1");
  EXPECT_EQ(textAtt(us, "outflow", "units"), "ft3 s-1");
  EXPECT_EQ(textAtt(us, "depth", "units"), "ft");
  EXPECT_EQ(textAtt(us, "velocity", "units"), "ft s-1");
  // The CF standard name stays: its canonical unit m3 s-1 is convertible.
  EXPECT_EQ(textAtt(us, "outflow", "standard_name"), "water_volume_transport_in_river_channel");
  for (const auto& [var, factor] : {std::pair{"outflow", 1 / kCubicFoot}, std::pair{"depth", 1 / kFoot}}) {
    const auto a = ncValues(si, var), b = ncValues(us, var);
    ASSERT_EQ(a.size(), b.size());
    ASSERT_FALSE(a.empty());
    double scale = 0, worst = 0;
    for (const double v : a) scale = std::max(scale, std::abs(v * factor));
    for (std::size_t k = 0; k < a.size(); ++k) worst = std::max(worst, std::abs(b[k] - a[k] * factor) / scale);
    EXPECT_LE(worst, kRoundTripTolerance) << var;
  }
  nc_close(si);
  nc_close(us);
}

TEST_F(RouteUnits, GeopackageTitlesRunInfoAndValues) {
  std::string units_si, units_us;
  const auto si = titles(path("si.gpkg"), &units_si), us = titles(path("us.gpkg"), &units_us);
  EXPECT_EQ(units_si, "si");
  EXPECT_EQ(units_us, "us");
  EXPECT_EQ(si.at("reaches.peak_q"), "peak discharge (m³/s)");
  EXPECT_EQ(us.at("reaches.peak_q"), "peak discharge (ft³/s)");
  EXPECT_EQ(us.at("reaches.peak_depth"), "peak depth (ft)");
  EXPECT_EQ(us.at("reaches.peak_velocity"), "peak velocity (ft/s)");
  EXPECT_EQ(us.at("reaches.volume_out_ft3"), "volume out (ft³)");
  EXPECT_EQ(us.at("reaches.dx_ft"), "sub-reach length (ft)");
  EXPECT_EQ(us.at("hydrographs.q"), "discharge (ft³/s)");
  EXPECT_EQ(us.at("reaches.attenuation_pct"), "peak attenuation (%)");
  EXPECT_EQ(us.count("reaches.volume_out_m3"), 0u);
  for (const auto& [si_field, us_field, factor] :
       {std::tuple{"peak_q", "peak_q", 1 / kCubicFoot}, std::tuple{"volume_out_m3", "volume_out_ft3", 1 / kCubicFoot},
        std::tuple{"dx_m", "dx_ft", 1 / kFoot}, std::tuple{"courant", "courant", 1.0}}) {
    const auto a = reachField(path("si.gpkg"), "reaches", si_field);
    const auto b = reachField(path("us.gpkg"), "reaches", us_field);
    ASSERT_EQ(a.size(), 41u) << si_field;
    ASSERT_EQ(b.size(), a.size()) << us_field;
    double scale = 0;
    for (const auto& [id, v] : a) scale = std::max(scale, std::abs(v * factor));
    for (const auto& [id, v] : a) EXPECT_NEAR(b.at(id), v * factor, kRoundTripTolerance * scale) << us_field << " " << id;
  }
}

TEST_F(RouteUnits, TheValidatorAcceptsAUsCustomaryGeopackage) {
  ASSERT_TRUE(fs::exists(kValidator)) << "GDAL's GeoPackage validator is missing (apt package python3-gdal)";
  const fs::path log = path("validator.log");
  const int valid =
      std::system(("/usr/bin/python3 " + kValidator + " " + path("lakes-us.gpkg").string() + " > " + log.string() + " 2>&1").c_str());
  EXPECT_EQ(valid, 0) << testsupport::slurp(log);
}

TEST_F(RouteUnits, TheSummaryNamesTheUnits) {
  EXPECT_NE(run("si").out.find("output units: si"), std::string::npos) << run("si").out;
  EXPECT_NE(run("us").out.find("output units: us"), std::string::npos) << run("us").out;
  EXPECT_NE(run("us").out.find("ft3/s at"), std::string::npos) << run("us").out;   // the outlet's peak
  EXPECT_NE(run("us").out.find(" ft3 in, "), std::string::npos) << run("us").out;  // the volume balance
  EXPECT_EQ(run("us").out.find("m3/s"), std::string::npos) << run("us").out;
  EXPECT_EQ(run("si").out.find("ft3"), std::string::npos) << run("si").out;
}

TEST_F(RouteUnits, TheReportUsesTheSameUnits) {
  const std::string si = testsupport::slurp(path("si-report") / "index.html");
  const std::string us = testsupport::slurp(path("si-to-us-report") / "index.html");
  ASSERT_FALSE(si.empty());
  ASSERT_FALSE(us.empty());
  EXPECT_NE(si.find("m³/s"), std::string::npos);
  EXPECT_EQ(si.find("cfs"), std::string::npos);
  EXPECT_NE(us.find("cfs"), std::string::npos);
  EXPECT_EQ(us.find("m³/s"), std::string::npos);
}

TEST_F(RouteUnits, WriteBackFollowsTheSourcesUnitsByDefault) {
  // The US customary network itself, copied: its rw_ layers in ft and ft³/s.
  const fs::path net = path("write-back.gpkg");
  fs::copy_file(path("us-input") / "network.gpkg", net);
  const fs::path us = path("us-input");
  const auto r = testsupport::runReachwise("route " + net.string() + " --inflow " + (us / "inflow.csv").string() +
                                           " --lateral " + (us / "lateral.csv").string() + " --config " +
                                           (us / "us.toml").string() + " --write-back --quiet");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto t = titles(net);
  EXPECT_EQ(t.at("rw_reaches.peak_q"), "peak discharge (ft³/s)");
  const auto a = reachField(path("si.gpkg"), "reaches", "volume_out_m3");
  const auto b = reachField(net, "rw_reaches", "volume_out_ft3");
  ASSERT_EQ(b.size(), a.size());
  for (const auto& [id, v] : a) EXPECT_NEAR(b.at(id), v / kCubicFoot, kRoundTripTolerance * std::abs(v / kCubicFoot) + 1e-6) << id;
}

TEST_F(RouteUnits, UnknownUnitsAreRefused) {
  const auto flag = testsupport::runReachwise("route " + kSample + "network.gpkg --inflow " + kSample +
                                              "inflow.csv --units feet --quiet");
  EXPECT_NE(flag.code, 0);
  EXPECT_NE(flag.err.find("--units"), std::string::npos) << flag.err;
  const fs::path bad = path("bad-units.toml");
  std::ofstream(bad) << "[route]\nunits = \"imperial\"\n";
  const auto file = testsupport::runReachwise("route " + kSample + "network.gpkg --inflow " + kSample +
                                              "inflow.csv --config " + bad.string() + " --quiet");
  EXPECT_NE(file.code, 0);
  EXPECT_NE(file.err.find("units"), std::string::npos) << file.err;
  EXPECT_NE(file.err.find("bad-units.toml"), std::string::npos) << file.err;
}

namespace {

// A US customary network calibrated with forcing and records in ft³/s: the
// calibrated network is SI, so its run file keeps the forcing's units apart
// (`[network] forcing_units = "us"`), and routing it with that run file
// gives the outflow calibrate reported. Before, the forcing was read as
// m³/s (35 times too much) and the report's run failed.
TEST(CalibrateUnits, AUsCustomaryNetworkCalibratesAndItsRunFileRoutesIt) {
  testsupport::TempDir dir;
  writeUsInput(dir.path());
  scaleCsv(kSample + "observed.csv", dir.path() / "observed.csv", {2}, kCubicFoot);
  const fs::path cal = dir.path() / "cal.gpkg";
  const std::string forcing = " --inflow " + (dir.path() / "inflow.csv").string() + " --lateral " +
                              (dir.path() / "lateral.csv").string() + " --config " + (dir.path() / "us.toml").string();
  const std::string records = " --observed " + (dir.path() / "observed.csv").string() + " --gauges " + kSample +
                              "gauges.gpkg";
  const auto calibrated = testsupport::runReachwise("calibrate " + (dir.path() / "network.gpkg").string() + forcing +
                                                    records + " --max-evaluations 8 --out " + cal.string() +
                                                    " --report " + (dir.path() / "report").string());
  ASSERT_EQ(calibrated.code, 0) << calibrated.err;
  std::ifstream toml(dir.path() / "cal.toml");
  std::stringstream text;
  text << toml.rdbuf();
  EXPECT_NE(text.str().find("forcing_units = 'us'"), std::string::npos) << text.str();
  // Routed with its run file, the calibrated network takes the cfs forcing
  // as cfs: the outlet's peak is that of the same network routed in SI
  // from the sample's m³/s forcing, in cfs (the outputs' units follow).
  const fs::path after = dir.path() / "after.gpkg", si = dir.path() / "si.gpkg";
  ASSERT_EQ(testsupport::runReachwise("route " + cal.string() + " --config " + (dir.path() / "cal.toml").string() +
                                      " --out " + after.string()).code, 0);
  ASSERT_EQ(testsupport::runReachwise("route " + cal.string() + " --inflow " + kSample + "inflow.csv --lateral " +
                                      kSample + "lateral.csv --out " + si.string()).code, 0);
  const auto peak_cfs = reachField(after, "reaches", "peak_q"), peak_m3s = reachField(si, "reaches", "peak_q");
  ASSERT_FALSE(peak_m3s.empty());
  double largest = 0;
  for (const auto& [id, q] : peak_m3s) largest = std::max(largest, q);
  // The cfs forcing differs from the m³/s one in its last digit (kRoundTripTolerance).
  for (const auto& [id, q] : peak_m3s)
    EXPECT_NEAR(peak_cfs.at(id) * kCubicFoot, q, kRoundTripTolerance * largest) << id;
}

}  // namespace
