// writeReport: choose what to show, build the report in a temporary folder
// beside the target, and rename it into place when everything is written.
#include "reachwise/report/Report.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <numeric>
#include <cmath>
#include <fstream>
#include <system_error>
#include <unordered_map>

#include "ReportModel.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/routing/Peak.hpp"

namespace reachwise::report {

namespace fs = std::filesystem;

namespace detail {

double DisplayUnits::q(double m3s) const { return us ? units::m3sToCfs(m3s) : m3s; }
double DisplayUnits::len(double m) const { return us ? units::metresToFeet(m) : m; }
double DisplayUnits::vel(double ms) const { return us ? units::metresToFeet(ms) : ms; }
double DisplayUnits::vol(double m3) const { return us ? m3 / units::kCubicMetresPerCubicFoot : m3; }

std::string displayTime(double unix_s, int utc_offset_min) {
  if (!std::isfinite(unix_s)) return "-";
  const std::string iso = io::formatIsoTime(std::round(unix_s / 60.0) * 60.0, utc_offset_min, 0);
  return iso.substr(0, 10) + " " + iso.substr(11, 5);
}

}  // namespace detail

namespace {

[[noreturn]] void folderError(const fs::path& where, const std::string& message) {
  InputLocation at;
  at.file = where.string();
  throw InputError(at, message);
}

/// Larger combined peak first; NaN last; ties by node order.
bool largerPeak(const routing::NodeSummary& a, const routing::NodeSummary& b) {
  const double x = std::isnan(a.peak_q_m3s) ? -INFINITY : a.peak_q_m3s;
  const double y = std::isnan(b.peak_q_m3s) ? -INFINITY : b.peak_q_m3s;
  return x > y;
}

/// A lake's peaks, attenuation, lag and peak level, defined as in the
/// GeoPackage's `lakes` layer (io::writeLakesLayer).
detail::LakeFacts lakeFacts(const io::LakeOutput& lake, const routing::TimeAxis& axis) {
  detail::LakeFacts f;
  const auto& r = lake.routing->result;
  if (!lake.routing->inflow_m3s.empty()) {
    const routing::Peak in = routing::findPeak(lake.routing->inflow_m3s);
    f.inflow_peak_m3s = in.value;
    f.inflow_peak_t = axis.at(in.index);
    if (!r.outflow_m3s.empty()) {
      const routing::Peak out = routing::findPeak(r.outflow_m3s);
      f.outflow_peak_m3s = out.value;
      f.outflow_peak_t = axis.at(out.index);
      if (in.value > 0) f.attenuation_pct = 100.0 * (1.0 - out.value / in.value);
      f.lag_h = (out.index - in.index) * axis.dt_s / 3600.0;
    }
  }
  for (std::size_t k = 0; k < r.level_m.size(); ++k)
    if (std::isfinite(r.level_m[k]) && !(r.level_m[k] <= f.peak_level_m)) {
      f.peak_level_m = r.level_m[k];
      f.peak_level_t = axis.at(static_cast<double>(k));
    }
  return f;
}

detail::ReportModel chooseContents(const ReportInputs& in, const ReportSeries& series) {
  detail::ReportModel m;
  m.units.us = in.us_units;
  m.utc_offset_min = in.results.axis.utc_offset_min;
  m.outlet_count = series.outletCount();
  for (const auto& n : in.results.nodes) {
    if (n.kind == routing::NodeKind::Confluence) ++m.confluence_count;
    if (n.kind == routing::NodeKind::Bifurcation) ++m.bifurcation_count;
  }

  // The captured confluences, found by node id, ranked by combined peak.
  std::unordered_map<std::string, std::uint32_t> wanted;
  for (const std::uint32_t c : series.confluences()) wanted.emplace("N:" + in.plan.reach_id[c], c);
  std::vector<std::size_t> found;
  for (std::size_t k = 0; k < in.results.nodes.size(); ++k) {
    const auto& n = in.results.nodes[k];
    if (n.kind == routing::NodeKind::Confluence && wanted.count(n.node_id)) found.push_back(k);
  }
  std::stable_sort(found.begin(), found.end(), [&](std::size_t a, std::size_t b) {
    return largerPeak(in.results.nodes[a], in.results.nodes[b]);
  });
  m.timing_confluences.assign(found.begin(), found.begin() + std::min(found.size(), detail::kTimingConfluences));
  m.hydrograph_confluences.assign(found.begin(), found.begin() + std::min(found.size(), detail::kShownConfluences));

  m.hydrograph_outlets = series.outlets();
  std::stable_sort(m.hydrograph_outlets.begin(), m.hydrograph_outlets.end(), [&](std::uint32_t a, std::uint32_t b) {
    const double x = in.results.reaches[a].peak_q_m3s, y = in.results.reaches[b].peak_q_m3s;
    return (std::isnan(x) ? -INFINITY : x) > (std::isnan(y) ? -INFINITY : y);
  });
  if (m.hydrograph_outlets.size() > detail::kShownOutlets) m.hydrograph_outlets.resize(detail::kShownOutlets);
  // Every outlet for the table, by peak (ties by plan order).
  for (std::uint32_t i = 0; i < in.plan.size(); ++i)
    if (in.plan.isOutlet(i)) m.ranked_outlets.push_back(i);
  const auto peak = [&](std::uint32_t i) {
    const double q = in.results.reaches[i].peak_q_m3s;
    return std::isnan(q) ? -INFINITY : q;
  };
  std::stable_sort(m.ranked_outlets.begin(), m.ranked_outlets.end(),
                   [&](std::uint32_t a, std::uint32_t b) { return peak(a) > peak(b); });
  if (m.ranked_outlets.size() > detail::kOutletTableRows) m.ranked_outlets.resize(detail::kOutletTableRows);

  // Lakes, the largest inflow peak first.
  for (std::size_t l = 0; l < in.lakes.size(); ++l) {
    m.lake_facts.push_back(lakeFacts(in.lakes[l], in.results.axis));
    m.shown_lakes.push_back(l);
  }
  std::stable_sort(m.shown_lakes.begin(), m.shown_lakes.end(), [&](std::size_t a, std::size_t b) {
    const double x = m.lake_facts[a].inflow_peak_m3s, y = m.lake_facts[b].inflow_peak_m3s;
    return (std::isnan(x) ? -INFINITY : x) > (std::isnan(y) ? -INFINITY : y);
  });

  // Gauges, the worst KGE first; a KGE that cannot be formed last.
  m.shown_gauges.resize(in.gauges.size());
  std::iota(m.shown_gauges.begin(), m.shown_gauges.end(), std::size_t{0});
  std::stable_sort(m.shown_gauges.begin(), m.shown_gauges.end(), [&](std::size_t a, std::size_t b) {
    const double x = in.gauges[a].skill.kge, y = in.gauges[b].skill.kge;
    return (std::isnan(x) ? INFINITY : x) < (std::isnan(y) ? INFINITY : y);
  });
  return m;
}

/// The folder the report is built in; removed unless release()d.
class TemporaryFolder {
public:
  explicit TemporaryFolder(fs::path path) : path_(std::move(path)) {
    std::error_code ec;
    fs::remove_all(path_, ec);
    if (!fs::create_directory(path_, ec) || ec)
      folderError(path_, "cannot create the report's temporary folder: " + ec.message());
  }
  ~TemporaryFolder() {
    if (path_.empty()) return;
    std::error_code ec;
    fs::remove_all(path_, ec);
  }
  TemporaryFolder(const TemporaryFolder&) = delete;
  TemporaryFolder& operator=(const TemporaryFolder&) = delete;
  const fs::path& path() const { return path_; }
  void release() { path_.clear(); }

private:
  fs::path path_;
};

/// Refuses a target that must not be replaced; true when it exists.
bool checkTarget(const fs::path& target, bool overwrite) {
  std::error_code ec;
  const fs::file_status st = fs::symlink_status(target, ec);
  if (!fs::exists(st)) return false;
  if (!overwrite) folderError(target, "a report already exists here; pass overwrite to replace it");
  if (!fs::is_directory(st)) folderError(target, "exists and is not a folder; not replacing it with a report");
  if (!fs::is_empty(target, ec) && !fs::exists(target / kReportMarker, ec))
    folderError(target, "the folder holds other files and is not a reachwise report; not replacing it");
  return true;
}

void writeMarker(const fs::path& folder) {
  const fs::path file = folder / kReportMarker;
  std::ofstream out(file);
  out << "reachwise run report; this folder is replaced when the report is written again\n";
  out.close();
  if (!out) folderError(file, "cannot write the report marker file");
}

}  // namespace

void writeReport(const fs::path& dir, const ReportInputs& in, const ReportSeries& series, bool overwrite,
                 io::OutputCommit* into) {
  REACHWISE_ASSERT(&series.plan() == &in.plan);
  REACHWISE_ASSERT(in.results.reaches.size() == in.plan.size());
  REACHWISE_ASSERT(in.plan.record.size() == in.plan.size());
  for (const auto& lake : in.lakes) REACHWISE_ASSERT(lake.lake && lake.routing);
  for (const auto& g : in.gauges) REACHWISE_ASSERT(g.observed && g.simulated);
  fs::path target = dir.lexically_normal();
  if (target.has_filename() == false) target = target.parent_path();
  if (target.empty() || target.filename() == "." || target.filename() == "..")
    throw InvalidParameter("report folder", "give a folder name of its own, e.g. OUT/report (got '" +
                                                dir.string() + "')");
  const fs::path parent = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::error_code ec;
  fs::create_directories(parent, ec);
  if (ec) folderError(parent, "cannot create the folder for the report: " + ec.message());
  const bool replace = checkTarget(target, overwrite);

  const std::string name = target.filename().string();
  TemporaryFolder work(io::partialPath(target));
  detail::ReportModel model = chooseContents(in, series);
  detail::drawFigures(work.path(), in, series, model);
  detail::writePage(work.path(), in, model);
  writeMarker(work.path());

  if (into) {  // put in place with the run's other outputs
    into->add(work.path(), target);
    work.release();
    return;
  }
  if (replace) {
    // Move the old report aside first, so that a failed rename leaves it.
    const fs::path old = parent / fmt::format(".{}.old-{}", name, ::getpid());
    fs::remove_all(old, ec);
    fs::rename(target, old, ec);
    if (ec) folderError(target, "cannot move the old report aside: " + ec.message());
    fs::rename(work.path(), target, ec);
    if (ec) {
      std::error_code back;
      fs::rename(old, target, back);
      folderError(target, "cannot move the new report into place: " + ec.message());
    }
    fs::remove_all(old, ec);
  } else {
    fs::rename(work.path(), target, ec);
    if (ec) folderError(target, "cannot move the new report into place: " + ec.message());
  }
  work.release();
}

}  // namespace reachwise::report
