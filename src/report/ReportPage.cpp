// index.html of the run report: key numbers and the caution first, then
// the figures, then the tables. Only inline CSS; every image is a file of
// the report folder.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <numeric>
#include <set>
#include <sstream>
#include <utility>

#include "ReportModel.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/Results.hpp"
#include "reachwise/version.hpp"

namespace reachwise::report::detail {

namespace {

std::string esc(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  for (const char c : s) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default: out += c;
    }
  }
  return out;
}

std::string num(double v, int digits) { return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-"; }

/// Large volumes with thousands separators: 1 234 567.
std::string volume(double v) {
  if (!std::isfinite(v)) return "-";
  std::string s = fmt::format("{:.0f}", std::abs(v));
  for (int k = static_cast<int>(s.size()) - 3; k > 0; k -= 3) s.insert(static_cast<std::size_t>(k), "\u202f");
  return (v < 0 ? "−" : "") + s;
}

constexpr const char* kStyle = R"(
body{font-family:sans-serif;color:#1a1a1a;margin:0;background:#f3f3f1;line-height:1.4}
main{max-width:1260px;margin:0 auto;padding:18px 24px 40px;background:#fff}
h1{font-size:26px;margin:4px 0 2px}
h2{font-size:19px;margin:28px 0 8px;border-bottom:2px solid #dde3ea;padding-bottom:3px}
p.sub{color:#555;margin:0 0 12px}
.caution{background:#fff6dc;border-left:5px solid #d99a00;padding:9px 14px;margin:12px 0}
.cards{display:grid;grid-template-columns:repeat(auto-fit,minmax(220px,1fr));gap:10px;margin:14px 0}
.card{border:1px solid #dde3ea;border-radius:6px;padding:9px 12px;background:#fafbfc}
.card .v{font-size:21px;font-weight:bold}
.card .k{color:#555;font-size:13px}
.card .d{color:#555;font-size:12.5px}
figure{margin:8px 0 14px;max-width:100%}
figure img{width:100%;height:auto;border:1px solid #e3e3e3}
figcaption{color:#555;font-size:13px}
.row{display:flex;flex-wrap:wrap;gap:0 18px;align-items:flex-start}
h3{font-size:16px;margin:8px 0 4px}
.side{flex:1 1 380px;min-width:0;max-width:660px}
.side table{font-size:13px}
.side th,.side td{padding:3px 7px}
.grid{display:grid;grid-template-columns:repeat(auto-fill,minmax(min(100%,480px),1fr));gap:6px 18px}
.scroll{overflow-y:auto;border:1px solid #e3e6ea}
.scroll table{margin:0;width:100%}
.scroll thead th{position:sticky;top:0}
.grid figure{width:auto!important}
table{border-collapse:collapse;font-size:14px;margin:6px 0 10px}
th,td{border-bottom:1px solid #e3e6ea;padding:4px 10px;text-align:left;vertical-align:top}
th{background:#f0f3f6}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}
table.kv th{width:230px;background:none;font-weight:normal;color:#555}
.warn{color:#8a4b00}
.note{background:#f2f7fb;border-left:4px solid #6b9cc8;padding:6px 12px;margin:8px 0;font-size:14px}
footer{color:#777;font-size:12.5px;margin-top:30px}
code{font-size:13px}
)";

class Page {
public:
  Page(const ReportInputs& in, const ReportModel& m) : in_(in), m_(m), u_(m.units) {}

  std::string html() {
    head();
    keyNumbers();
    figures();
    runSummary();
    topPeaks();
    topAttenuation();
    coincident();
    out_ << "<footer>Written by reachwise " << esc(kVersion) << " (" << esc(kGitHash)
         << "). Figures drawn with cairo. Times are in the input's offset (" << esc(offset())
         << ").</footer>\n</main>\n</body>\n</html>\n";
    return out_.str();
  }

private:
  std::string offset() const {
    const int o = m_.utc_offset_min;
    if (o == 0) return "UTC";
    return fmt::format("UTC{}{:02d}:{:02d}", o < 0 ? '-' : '+', std::abs(o) / 60, std::abs(o) % 60);
  }
  std::string time(double t) const { return displayTime(t, m_.utc_offset_min); }
  const std::string& id(std::size_t i) const { return in_.plan.reach_id[i]; }

  void head() {
    const auto& axis = in_.results.axis;
    out_ << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
         << "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
         << "<meta name=\"generator\" content=\"reachwise " << esc(kVersion) << "\">\n"
         << "<title>reachwise run report: " << esc(in_.table.layer) << "</title>\n<style>" << kStyle
         << "</style>\n</head>\n<body>\n<main>\n";
    const std::string source = std::filesystem::path(in_.table.source).filename().string();
    out_ << "<h1>Run report: " << esc(source.empty() ? in_.table.source : source)
         << (in_.table.layer.empty() ? "" : ", layer " + esc(in_.table.layer)) << "</h1>\n";
    const auto count = [](std::size_t n, const char* one, const char* many) {
      return std::to_string(n) + " " + (n == 1 ? one : many);
    };
    out_ << "<p class=\"sub\">" << count(in_.plan.size(), "reach", "reaches") << ", "
         << count(m_.confluence_count, "confluence", "confluences") << ", "
         << count(m_.outlet_count, "outlet", "outlets")
         << (in_.lakes.empty() ? "" : ", " + count(in_.lakes.size(), "lake", "lakes"))
         << (in_.gauges.empty() ? "" : ", " + count(in_.gauges.size(), "gauge", "gauges")) << " &middot; method <b>"
         << esc(in_.info.method) << "</b> &middot; " << esc(time(static_cast<double>(axis.start_unix_s)))
         << " to " << esc(time(axis.at(static_cast<double>(axis.steps ? axis.steps - 1 : 0)))) << " ("
         << esc(offset()) << "), " << axis.steps << " steps of " << num(axis.dt_s, 0) << " s</p>\n";
    out_ << "<p class=\"caution\"><b>Caution.</b> " << esc(io::kResultsCaution) << "</p>\n";
  }

  void card(const std::string& key, const std::string& value, const std::string& detail) {
    out_ << "<div class=\"card\"><div class=\"k\">" << esc(key) << "</div><div class=\"v\">" << esc(value)
         << "</div><div class=\"d\">" << esc(detail) << "</div></div>\n";
  }

  void keyNumbers() {
    out_ << "<div class=\"cards\">\n";
    if (!m_.hydrograph_outlets.empty()) {
      const std::uint32_t o = m_.hydrograph_outlets.front();
      const auto& s = in_.results.reaches[o];
      card(m_.outlet_count > 1 ? "largest outlet peak" : "outlet peak",
           num(u_.q(s.peak_q_m3s), 2) + " " + u_.q_unit(), "at O:" + id(o) + ", " + time(s.peak_time_s));
    }
    std::size_t close = 0;
    for (const auto& n : in_.results.nodes)
      if (n.kind == routing::NodeKind::Confluence && n.branch_spread_s <= kCoincidenceS) ++close;
    card("confluences with branch peaks within 1 h", std::to_string(close),
         fmt::format("of {} confluences", m_.confluence_count));
    lakeCard();
    gaugeCard();
    const routing::VolumeBalance& v = in_.results.volume;
    card("volume balance error", num(v.error_pct, 3) + " %",
         volume(u_.vol(v.inflow_m3 + v.lateral_m3)) + " " + u_.vol_unit() + " in, " +
             volume(u_.vol(v.outflow_m3)) + " out");
    const auto w = warnings();
    card("warnings", std::to_string(w.size()), w.empty() ? "none" : "listed in the run summary");
    out_ << "</div>\n";
  }

  /// The lake that lowers its inflow peak most.
  void lakeCard() {
    const std::size_t* best = nullptr;
    for (const std::size_t& l : m_.shown_lakes) {
      const double a = m_.lake_facts[l].attenuation_pct;
      if (std::isfinite(a) && (!best || a > m_.lake_facts[*best].attenuation_pct)) best = &l;
    }
    if (!best) return;
    const LakeFacts& f = m_.lake_facts[*best];
    card(in_.lakes.size() > 1 ? "largest lake attenuation" : "lake attenuation", num(f.attenuation_pct, 1) + " %",
         "lake " + in_.lakes[*best].lake->lake_id + ": peak " + num(u_.q(f.inflow_peak_m3s), 2) + " → " +
             num(u_.q(f.outflow_peak_m3s), 2) + " " + u_.q_unit() + ", " + num(f.lag_h, 1) + " h later");
  }

  /// The median KGE over the gauges where it can be formed, and the worst gauge.
  void gaugeCard() {
    std::vector<double> kge;
    for (const auto& g : in_.gauges)
      if (std::isfinite(g.skill.kge)) kge.push_back(g.skill.kge);
    if (in_.gauges.empty()) return;
    if (kge.empty()) {
      card("gauges", std::to_string(in_.gauges.size()), "no KGE could be formed (see the gauge table)");
      return;
    }
    std::sort(kge.begin(), kge.end());
    const std::size_t n = kge.size();
    const double median = n % 2 ? kge[n / 2] : (kge[n / 2 - 1] + kge[n / 2]) / 2;
    const io::GaugeOutput& worst = in_.gauges[m_.shown_gauges.front()];
    card(in_.gauges.size() > 1 ? "median KGE at the gauges" : "KGE at the gauge", num(median, 2),
         in_.gauges.size() > 1 ? fmt::format("{} gauges; worst {} on reach {}: KGE {}", in_.gauges.size(),
                                             worst.gauge_id, worst.reach_id, num(worst.skill.kge, 2))
                               : fmt::format("gauge {} on reach {}; 1 is a perfect fit", worst.gauge_id,
                                             worst.reach_id));
  }

  /// A figure with its title and what it shows (units) under it; `wide`:
  /// as wide as the page (an SVG scales), else at most its own width.
  void figure(const FigureFile& f, const std::string& alt, bool wide = false, const std::string& id = "") {
    out_ << "<figure" << (id.empty() ? "" : " id=\"" + esc(id) + "\"") << " style=\"width:"
         << (wide ? std::string("100%") : num(f.width_px, 0) + "px") << "\"><img src=\"" << esc(f.file)
         << "\" alt=\"" << esc(alt) << "\"><figcaption><b>" << esc(f.caption) << "</b>"
         << (f.note.empty() ? "" : ". " + esc(f.note)) << "</figcaption></figure>\n";
  }

  void figures() {
    // A narrow map (a tall network) leaves room beside it: for one or two
    // outlets their panels, else the outlet table. A wide map takes the
    // page's width and everything else goes below it.
    constexpr double kNarrowMap = 780;  // leaves at least 414 px of the 1212 for the side column
    const bool narrow = m_.map.width_px <= kNarrowMap;
    const bool panels_beside = narrow && m_.outlet_count <= 2;
    const bool table_beside = narrow && !panels_beside;
    const char* outlet_title = m_.outlet_count == 1 ? "Hydrograph at the outlet" : "Hydrographs at the outlets";
    out_ << "<h2>Network" << (panels_beside ? (m_.outlet_count == 1 ? " and outlet" : " and outlets") : "")
         << "</h2>\n";
    out_ << "<div class=\"row\">\n";
    figure(m_.map, "Map of the network coloured by peak discharge", !narrow);
    if (panels_beside) {
      out_ << "<div class=\"side\">\n<h3>" << outlet_title << "</h3>\n<div id=\"outlet-panels\">\n";
      outletFigures();
      out_ << "</div>\n";
      outletTable();
      majorConfluences();
      out_ << "</div>\n";
    } else if (table_beside) {
      out_ << "<div class=\"side\">\n<h3>Outlets, largest peak first</h3>\n<div class=\"scroll\" style=\"max-height:"
           << num(std::max(320.0, m_.map.height_px - 40), 0) << "px\">\n";
      outletTable();
      out_ << "</div>\n</div>\n";
    }
    out_ << "</div>\n";
    if (!panels_beside) {
      majorConfluences();
      out_ << "<h2>" << outlet_title << "</h2>\n";
      outletRanking(table_beside);
      out_ << "<div class=\"grid\" id=\"outlet-panels\">\n";
      outletFigures();
      out_ << "</div>\n";
      if (!table_beside) {
        // A long list scrolls in a box as wide as the page.
        const bool box = m_.ranked_outlets.size() > 20;
        if (box) out_ << "<div class=\"scroll\" style=\"max-height:520px\">\n";
        outletTable();
        if (box) out_ << "</div>\n";
      }
    }
    namedReaches();
    lakes();
    calibration();
    gauges();
    out_ << "<h2>Hydrographs at the major confluences</h2>\n";
    if (m_.confluence_figures.empty()) {
      out_ << "<p>The network has no confluences.</p>\n";
    } else {
      out_ << "<p>The " << m_.confluence_figures.size()
           << " confluences with the largest combined peak (among the " << ReportSeries::kMaxCandidateConfluences
           << " with the largest upstream networks): each incoming branch, their sum, and the outflow at the "
              "downstream end of the reach below. Dots mark the peaks.</p>\n<div class=\"grid\">\n";
      for (const auto& f : m_.confluence_figures) figure(f, "Hydrographs at " + f.caption);
      out_ << "</div>\n";
    }
    out_ << "<h2>Confluence timing</h2>\n<p>How far apart the branch peaks reach each confluence. Where they "
            "arrive within an hour of each other the floods add up; a wide spread lets the main peak pass "
            "before the tributary's arrives.</p>\n";
    if (m_.timing.file.empty()) out_ << "<p>The network has no confluences.</p>\n";
    else figure(m_.timing, "Chart of branch peak times at the major confluences");
  }

  /// How the outlet panels and the outlet table are chosen and ordered.
  void outletRanking(bool table_above) {
    out_ << "<p>Outlets are ranked by peak discharge, largest first. ";
    if (m_.outlet_figures.size() < m_.outlet_count)
      out_ << "Panels for the " << m_.outlet_figures.size() << " with the largest peaks"
           << (m_.outlet_count > ReportSeries::kMaxOutlets
                   ? fmt::format(" among the {} with the largest upstream networks", ReportSeries::kMaxOutlets)
                   : std::string())
           << ", of " << m_.outlet_count << " outlets";
    else
      out_ << "A panel for each of the " << m_.outlet_count << " outlets";
    out_ << "; the table " << (table_above ? "beside the map" : "below") << " lists "
         << (m_.ranked_outlets.size() < m_.outlet_count
                 ? fmt::format("the {} with the largest peaks", m_.ranked_outlets.size())
                 : std::string("every outlet"))
         << " with its peak, whether it has a panel and whether the map labels it; every outlet is in the "
            "GeoPackage's <code>reaches</code> layer.</p>\n";
  }

  /// Every outlet (up to kOutletTableRows), largest peak first.
  void outletTable() {
    std::map<std::uint32_t, std::size_t> panel;  // outlet -> its panel's number
    for (std::size_t k = 0; k < m_.outlet_figure_reaches.size(); ++k) panel[m_.outlet_figure_reaches[k]] = k + 1;
    out_ << "<table id=\"outlets\">\n<thead><tr><th class=\"num\">#</th><th>outlet reach</th><th class=\"num\">"
            "peak (" << u_.q_unit() << ")</th><th>peak time</th><th class=\"num\">panel</th><th>on map</th>"
            "</tr></thead>\n<tbody>\n";
    std::size_t rank = 0;
    for (const std::uint32_t o : m_.ranked_outlets) {
      const auto& r = in_.results.reaches[o];
      const auto it = panel.find(o);
      const bool has_panel = it != panel.end();
      out_ << "<tr><td class=\"num\">" << ++rank << "</td><td>" << esc(id(o)) << "</td><td class=\"num\">"
           << num(u_.q(r.peak_q_m3s), 2) << "</td><td>" << esc(time(r.peak_time_s)) << "</td><td class=\"num\">"
           << (has_panel ? std::to_string(it->second) : std::string("-")) << "</td><td>"
           << (m_.map_labels.count("O:" + id(o)) ? "labelled" : "symbol only") << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  /// Every routed lake: a table of its peaks and a panel per lake.
  void lakes() {
    if (in_.lakes.empty()) return;
    out_ << "<h2>Lakes and reservoirs</h2>\n<p>Each lake is routed as a level pool (storage indication, "
            "docs/methods.md): the flow arriving from the reaches that end at it, the outflow by its rule (a "
            "spillway's weir, a rating table or a linear reservoir) into the reach below, and its level. "
            "Attenuation: how much lower the outflow peak is than the inflow peak; lag: the outflow peak's time "
            "less the inflow peak's.</p>\n<p class=\"note\">Level-pool routing takes the lake's surface as "
            "level and its area as the outline's at every level, and applies the outflow rule as given: gate "
            "operation, operating rules and wind set-up are not represented, and the rule's values decide the "
            "result.</p>\n";
    const std::size_t rows = std::min(m_.shown_lakes.size(), kLakeTableRows);
    if (rows < m_.shown_lakes.size())
      out_ << "<p>The " << rows << " lakes with the largest inflow peak of " << m_.shown_lakes.size() << ".</p>\n";
    const std::string q = u_.q_unit(), len = u_.len_unit();
    out_ << "<table id=\"lakes\">\n<thead><tr><th>lake</th><th>outflow into reach</th><th class=\"num\">inflow "
            "peak (" << q << ")</th><th>inflow peak time</th><th class=\"num\">outflow peak (" << q
         << ")</th><th>outflow peak time</th><th class=\"num\">attenuation (%)</th><th class=\"num\">lag (h)"
            "</th><th class=\"num\">peak level (" << len << ")</th></tr></thead>\n<tbody>\n";
    for (std::size_t k = 0; k < rows; ++k) {
      const std::size_t l = m_.shown_lakes[k];
      const LakeFacts& f = m_.lake_facts[l];
      const std::string& into = in_.lakes[l].outflow_reach;
      out_ << "<tr><td>" << esc(in_.lakes[l].lake->lake_id) << "</td><td>"
           << (into.empty() ? std::string("(terminal)") : esc(into))
           << "</td><td class=\"num\">" << num(u_.q(f.inflow_peak_m3s), 2)
           << "</td><td>" << esc(time(f.inflow_peak_t))
           << "</td><td class=\"num\">" << num(u_.q(f.outflow_peak_m3s), 2)
           << "</td><td>" << esc(time(f.outflow_peak_t))
           << "</td><td class=\"num\">" << num(f.attenuation_pct, 1)
           << "</td><td class=\"num\">" << num(f.lag_h, 2)
           << "</td><td class=\"num\">" << num(u_.len(f.peak_level_m), 2) << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
    if (m_.lake_figures.size() < m_.shown_lakes.size())
      out_ << "<p>Panels for the " << m_.lake_figures.size() << " lakes with the largest inflow peak.</p>\n";
    out_ << "<div class=\"grid\">\n";
    for (const auto& f : m_.lake_figures) figure(f, "Inflow, outflow and level of " + f.caption);
    out_ << "</div>\n";
  }

  /// The highest observed and simulated values over the compared samples
  /// (where both are present), as the peak error takes them
  /// (gauges::SkillScores::peak_error_pct); NaN when none are compared.
  static std::pair<double, double> comparedPeaks(const io::GaugeOutput& g) {
    double o = NAN, s = NAN;
    const std::size_t n = std::min(g.observed->size(), g.simulated->size());
    for (std::size_t k = 0; k < n; ++k) {
      const double ok = (*g.observed)[k], sk = (*g.simulated)[k];
      if (!std::isfinite(ok) || !std::isfinite(sk)) continue;
      o = std::isnan(o) ? ok : std::max(o, ok);
      s = std::isnan(s) ? sk : std::max(s, sk);
    }
    return {o, s};
  }

  /// What calibration changed: the fitted sub-basins, then every gauge's
  /// scores before and after (the whole network routed each way).
  void calibration() {
    const CalibrationComparison* c = in_.calibration;
    if (!c) return;
    const std::string objective = c->rows.empty() ? std::string("kge") : c->rows.front().objective;
    out_ << "<h2>Calibration: before and after</h2>\n<p>This run routes the network as <code>reachwise "
            "calibrate</code> fitted it: one multiplier on "
         << esc(c->what) << " per gauged sub-basin (every reach above the gauge that no gauge above it holds), "
            "chosen upstream first to maximise "
         << esc(objective)
         << " at the gauge (docs/methods.md, \"Calibration\"). Each gauge's panel below shows the outflow "
            "before calibration as a grey line.</p>\n<p class=\"note\">A multiplier at a bound, or one far "
            "from 1, says the records ask for more than the parameter can honestly give: check the "
            "observations, the forcing and the sections before trusting it. Calibrated values fit these "
            "records over this period; test them on another flood before using them for design.</p>\n";
    out_ << "<table id=\"calibration\">\n<thead><tr><th>gauge</th><th>reach</th><th class=\"num\">reaches"
            "</th><th class=\"num\">multiplier</th><th class=\"num\">bounds</th><th class=\"num\">"
         << esc(objective) << " in the fit, before</th><th class=\"num\">after</th><th class=\"num\">"
            "routings</th></tr></thead>\n<tbody>\n";
    for (const io::CalibrationRow& r : c->rows)
      out_ << "<tr><td>" << esc(r.gauge_id) << "</td><td>" << esc(r.reach_id) << "</td><td class=\"num\">"
           << r.reaches << "</td><td class=\"num\">" << num(r.multiplier, 3)
           << (std::isnan(r.muskingum_x) ? std::string() : ", X " + num(r.muskingum_x, 3))
           << (r.at_bound ? " (at a bound)" : "") << "</td><td class=\"num\">" << num(r.lower, 2) << "&ndash;"
           << num(r.upper, 2) << "</td><td class=\"num\">" << num(r.objective_before, 3)
           << "</td><td class=\"num\">" << num(r.objective_after, 3) << "</td><td class=\"num\">"
           << r.evaluations << "</td></tr>\n";
    out_ << "</tbody>\n</table>\n";
    for (const auto& why : c->left_out) out_ << "<p class=\"note\">Left out: " << esc(why) << "</p>\n";
    out_ << "<table id=\"calibration-gauges\">\n<thead><tr><th>gauge</th><th class=\"num\">KGE before</th>"
            "<th class=\"num\">KGE after</th><th class=\"num\">NSE before</th><th class=\"num\">NSE after"
            "</th><th class=\"num\">percent bias before (%)</th><th class=\"num\">after (%)</th>"
            "<th class=\"num\">peak error before (%)</th><th class=\"num\">after (%)</th></tr></thead>\n"
            "<tbody>\n";
    for (const std::size_t gi : m_.shown_gauges) {
      const io::GaugeOutput& g = in_.gauges[gi];
      const auto it = std::find(c->gauge_ids.begin(), c->gauge_ids.end(), g.gauge_id);
      if (it == c->gauge_ids.end()) continue;
      const gauges::SkillScores& b = c->before[static_cast<std::size_t>(it - c->gauge_ids.begin())];
      const gauges::SkillScores& a = g.skill;
      out_ << "<tr><td>" << esc(g.gauge_id) << "</td><td class=\"num\">" << num(b.kge, 3)
           << "</td><td class=\"num\">" << num(a.kge, 3) << "</td><td class=\"num\">" << num(b.nse, 3)
           << "</td><td class=\"num\">" << num(a.nse, 3) << "</td><td class=\"num\">" << num(b.pbias_pct, 1)
           << "</td><td class=\"num\">" << num(a.pbias_pct, 1) << "</td><td class=\"num\">"
           << num(b.peak_error_pct, 1) << "</td><td class=\"num\">" << num(a.peak_error_pct, 1)
           << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  /// Every gauge: its skill scores in a table and a panel per gauge, the
  /// worst KGE first.
  void gauges() {
    if (in_.gauges.empty()) return;
    out_ << "<h2>Gauges: observed and simulated discharge</h2>\n<p>Each gauge's observations compared with "
            "the simulated outflow of its reach over the times both have values (docs/methods.md, \"Skill "
            "scores\"). The Nash&ndash;Sutcliffe efficiency (NSE; Nash &amp; Sutcliffe 1970) compares the "
            "squared errors with the observations' own variance: 1 is a perfect fit, 0 is no better than "
            "the observed mean, and it can be negative. The Kling&ndash;Gupta efficiency (KGE; Gupta et al. "
            "2009) combines the correlation r, the ratio of spreads &alpha; (simulated over observed) and "
            "the ratio of means &beta;; each component is 1 and KGE is 1 for a perfect fit. Percent bias and "
            "peak error are positive where the run carries too much water; peak timing is positive where "
            "the simulated peak comes late.</p>\n<p class=\"note\">A score says how close the run is to "
            "these records over this period; gauge records carry their own errors (rating curves are least "
            "certain at flood peaks), and a good score at one gauge says little about ungauged reaches.</p>\n";
    out_ << "<table id=\"gauges\">\n<thead><tr><th>gauge</th><th>reach</th><th class=\"num\">n_obs</th>"
            "<th class=\"num\">observed peak (" << u_.q_unit() << ")</th><th class=\"num\">simulated peak ("
         << u_.q_unit() << ")</th><th class=\"num\">NSE</th><th class=\"num\">KGE</th><th class=\"num\">r</th>"
            "<th class=\"num\">&alpha;</th><th class=\"num\">&beta;</th><th class=\"num\">percent bias (%)"
            "</th><th class=\"num\">peak error (%)</th><th class=\"num\">peak timing (h)</th></tr></thead>"
            "\n<tbody>\n";
    for (const std::size_t gi : m_.shown_gauges) {
      const io::GaugeOutput& g = in_.gauges[gi];
      const auto& k = g.skill;
      const std::pair<double, double> peaks = comparedPeaks(g);
      out_ << "<tr><td>" << esc(g.gauge_id) << "</td><td>" << esc(g.reach_id) << "</td><td class=\"num\">"
           << k.n_obs << "</td><td class=\"num\">" << num(u_.q(peaks.first), 2) << "</td><td class=\"num\">"
           << num(u_.q(peaks.second), 2) << "</td><td class=\"num\">" << num(k.nse, 3) << "</td><td class=\"num\">"
           << num(k.kge, 3) << "</td><td class=\"num\">" << num(k.kge_r, 3) << "</td><td class=\"num\">"
           << num(k.kge_alpha, 3) << "</td><td class=\"num\">" << num(k.kge_beta, 3)
           << "</td><td class=\"num\">" << num(k.pbias_pct, 1) << "</td><td class=\"num\">"
           << num(k.peak_error_pct, 1) << "</td><td class=\"num\">" << num(k.peak_timing_h, 2)
           << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
    if (m_.gauge_figures.size() < m_.shown_gauges.size())
      out_ << "<p>Panels for the " << m_.gauge_figures.size() << " gauges with the lowest KGE of "
           << m_.shown_gauges.size() << ".</p>\n";
    out_ << "<div class=\"grid\">\n";
    for (const auto& f : m_.gauge_figures) figure(f, "Observed and simulated discharge at " + f.caption);
    out_ << "</div>\n";
  }

  /// The confluences labelled on the map, with the numbers behind them.
  void majorConfluences() {
    if (m_.hydrograph_confluences.empty()) return;
    out_ << "<h3>Major confluences (labelled on the map where there is room)</h3>\n<table id=\"major-confluences\">\n<thead><tr>"
         << "<th>confluence</th><th class=\"num\">combined peak (" << u_.q_unit()
         << ")</th><th>peak time</th><th class=\"num\">branch spread (h)</th><th class=\"num\">coincidence</th>"
            "<th>on map</th></tr></thead>\n<tbody>\n";
    for (const std::size_t k : m_.hydrograph_confluences) {
      const auto& n = in_.results.nodes[k];
      out_ << "<tr><td>" << esc(n.node_id) << "</td><td class=\"num\">" << num(u_.q(n.peak_q_m3s), 2)
           << "</td><td>" << esc(time(n.peak_time_s)) << "</td><td class=\"num\">"
           << num(n.branch_spread_s / 3600, 2) << "</td><td class=\"num\">" << num(n.coincidence_ratio, 2)
           << "</td><td>" << (m_.map_labels.count(n.node_id) ? "labelled" : "symbol only") << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  /// The reaches the user named (`--report-reaches`), in that order.
  void namedReaches() {
    if (m_.reach_figures.empty()) return;
    out_ << "<h2>Hydrographs at the reaches asked for</h2>\n<p>The outflow at the downstream end of each reach "
            "named with <code>--report-reaches</code>, its peak, and the peak of everything that entered it "
            "(top and lateral inflow).</p>\n<div class=\"grid\">\n";
    for (const auto& f : m_.reach_figures) figure(f, "Hydrograph at " + f.caption);
    out_ << "</div>\n";
  }

  void outletFigures() {
    for (std::size_t k = 0; k < m_.outlet_figures.size(); ++k)
      figure(m_.outlet_figures[k], "Hydrograph at " + m_.outlet_figures[k].caption, false,
             fmt::format("outlet-panel-{}", k + 1));
  }

  std::vector<std::string> warnings() const {
    std::vector<std::string> all;
    std::set<std::string> seen;
    for (const auto* list : {&in_.info.warnings, &in_.results.warnings})
      for (const auto& w : *list)
        if (seen.insert(w).second) all.push_back(w);
    return all;
  }

  void row(const std::string& key, const std::string& value_html) {
    out_ << "<tr><th>" << esc(key) << "</th><td>" << value_html << "</td></tr>\n";
  }

  void runSummary() {
    const auto& axis = in_.results.axis;
    out_ << "<h2>Run summary</h2>\n<table class=\"kv\" id=\"run-summary\">\n";
    row("network", "<code>" + esc(in_.table.source) + "</code>, layer <code>" + esc(in_.table.layer) + "</code>");
    std::string inputs;
    for (const auto& f : in_.info.inputs) inputs += (inputs.empty() ? "" : "<br>") + ("<code>" + esc(f) + "</code>");
    row("inputs", inputs.empty() ? "-" : inputs);
    row("method", esc(in_.info.method));
    if (in_.ensemble)
      row("ensemble", esc(fmt::format("{} members; maps, tables and panels show member {}, the outlet panels also "
                                       "the members' 10-90 % band and median (all members: the reaches layer's "
                                       "_p10/_p50/_p90 fields and the member_reaches table)",
                                       in_.ensemble->members, in_.ensemble->reference)));
    row("time steps", fmt::format("{} steps of {} s", axis.steps, num(axis.dt_s, 0)));
    row("start", esc(time(static_cast<double>(axis.start_unix_s)) + " (" + offset() + ")"));
    row("end", esc(time(axis.at(static_cast<double>(axis.steps ? axis.steps - 1 : 0))) + " (" + offset() + ")"));
    const routing::VolumeBalance& v = in_.results.volume;
    const std::string vu = std::string(" ") + u_.vol_unit();
    row("volume in", esc(volume(u_.vol(v.inflow_m3 + v.lateral_m3)) + vu + " (" + volume(u_.vol(v.inflow_m3)) +
                         " point inflow, " + volume(u_.vol(v.lateral_m3)) + " lateral)"));
    row("volume out", esc(volume(u_.vol(v.outflow_m3)) + vu + " through the outlets"));
    row("volume still stored", esc(volume(u_.vol(v.storage_change_m3)) + vu + " (storage change over the run)"));
    row("volume balance error", esc(num(v.error_pct, 3) + " % of all inflow, " + num(v.event_error_pct, 3) +
                                    " % of the event volume (what entered above the initial flow)"));
    const auto w = warnings();
    std::string wl;
    for (const auto& x : w) wl += (wl.empty() ? "" : "<br>") + ("<span class=\"warn\">" + esc(x) + "</span>");
    row("warnings", w.empty() ? "none" : wl);
    row("results GeoPackage", in_.gpkg_path.empty() ? "-" : "<code>" + esc(in_.gpkg_path) + "</code>");
    if (!in_.info.command_line.empty()) row("command", "<code>" + esc(in_.info.command_line) + "</code>");
    out_ << "</table>\n";
    worstEventVolume();
  }

  /// The reaches with the largest event volume error (either sign).
  void worstEventVolume() {
    out_ << "<h3>Reaches with the largest event volume error</h3>\n<p>Volume error (in + lateral − out − "
            "storage change) as % of the volume that entered above the initial flow; envelope: how far the "
            "outflow went outside its inflow envelope (lowest to highest inflow), % of the rise.</p>\n<table id=\"worst-event-volume\">\n"
            "<thead><tr><th>#</th><th>reach</th><th class=\"num\">event volume error (%)</th><th class=\"num\">"
            "volume error, all inflow (%)</th><th class=\"num\">envelope excursion (% of rise)</th></tr></thead>\n"
            "<tbody>\n";
    std::size_t rank = 0;
    const auto size = [](const routing::ReachSummary& s) { return std::abs(s.volume.event_error_pct); };
    for (const std::size_t i : ranked(size, kWorstVolumeRows)) {
      const auto& s = in_.results.reaches[i];
      if (std::isnan(s.volume.event_error_pct)) break;
      out_ << "<tr><td>" << ++rank << "</td><td>" << esc(id(i)) << "</td><td class=\"num\">"
           << num(s.volume.event_error_pct, 3) << "</td><td class=\"num\">" << num(s.volume.error_pct, 3)
           << "</td><td class=\"num\">" << num(s.numerics.envelope_excursion_pct, 2) << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  std::vector<std::size_t> ranked(const auto& key, std::size_t rows = kTableRows) const {
    std::vector<std::size_t> order(in_.plan.size());
    std::iota(order.begin(), order.end(), std::size_t{0});
    const auto value = [&](std::size_t i) {
      const double v = key(in_.results.reaches[i]);
      return std::isnan(v) ? -INFINITY : v;
    };
    const std::size_t n = std::min(rows, order.size());
    std::partial_sort(order.begin(), order.begin() + static_cast<std::ptrdiff_t>(n), order.end(),
                      [&](std::size_t a, std::size_t b) { return value(a) != value(b) ? value(a) > value(b) : a < b; });
    order.resize(n);
    return order;
  }

  void topPeaks() {
    out_ << "<h2>Reaches with the largest peak flow</h2>\n<table id=\"top-peak\">\n<thead><tr><th>#</th>"
         << "<th>reach</th><th class=\"num\">peak flow (" << u_.q_unit() << ")</th><th>peak time</th>"
         << "<th class=\"num\">peak depth (" << u_.len_unit() << ")</th><th class=\"num\">peak velocity ("
         << u_.vel_unit() << ")</th><th class=\"num\">Strahler order</th></tr></thead>\n<tbody>\n";
    std::size_t rank = 0;
    for (const std::size_t i : ranked([](const routing::ReachSummary& s) { return s.peak_q_m3s; })) {
      const auto& s = in_.results.reaches[i];
      out_ << "<tr><td>" << ++rank << "</td><td>" << esc(id(i)) << "</td><td class=\"num\">"
           << num(u_.q(s.peak_q_m3s), 2) << "</td><td>" << esc(time(s.peak_time_s)) << "</td><td class=\"num\">"
           << num(u_.len(s.peak_depth_m), 2) << "</td><td class=\"num\">" << num(u_.vel(s.peak_velocity_ms), 2)
           << "</td><td class=\"num\">" << (i < in_.plan.strahler.size() ? std::to_string(in_.plan.strahler[i]) : "-")
           << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  void topAttenuation() {
    out_ << "<h2>Reaches with the largest attenuation</h2>\n<p>Attenuation: how much lower the outflow peak is "
            "than the reach's inflow peak (top inflow plus lateral inflow).</p>\n<table id=\"top-attenuation\">\n"
         << "<thead><tr><th>#</th><th>reach</th><th class=\"num\">inflow peak (" << u_.q_unit()
         << ")</th><th class=\"num\">outflow peak (" << u_.q_unit()
         << ")</th><th class=\"num\">attenuation (%)</th><th class=\"num\">peak travel time (h)</th></tr></thead>\n"
            "<tbody>\n";
    std::size_t rank = 0;
    for (const std::size_t i : ranked([](const routing::ReachSummary& s) { return s.attenuation_pct; })) {
      const auto& s = in_.results.reaches[i];
      out_ << "<tr><td>" << ++rank << "</td><td>" << esc(id(i)) << "</td><td class=\"num\">"
           << num(u_.q(s.inflow_peak_m3s), 2) << "</td><td class=\"num\">" << num(u_.q(s.peak_q_m3s), 2)
           << "</td><td class=\"num\">" << num(s.attenuation_pct, 2) << "</td><td class=\"num\">"
           << num(s.travel_time_s / 3600, 2) << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  void coincident() {
    constexpr std::size_t kMaxRows = 50;
    std::vector<const routing::NodeSummary*> close;
    for (const auto& n : in_.results.nodes)
      if (n.kind == routing::NodeKind::Confluence && n.branch_spread_s <= kCoincidenceS) close.push_back(&n);
    std::stable_sort(close.begin(), close.end(), [](const auto* a, const auto* b) {
      return (std::isnan(a->peak_q_m3s) ? -INFINITY : a->peak_q_m3s) >
             (std::isnan(b->peak_q_m3s) ? -INFINITY : b->peak_q_m3s);
    });
    out_ << "<h2>Confluences where branch peaks coincide within one hour</h2>\n";
    if (close.empty()) {
      out_ << "<p id=\"coincident-none\">None: at every confluence the branch peaks arrive more than an hour "
              "apart.</p>\n";
      return;
    }
    out_ << "<p>Coincidence ratio: the combined peak over the sum of the branch peaks (1 = the peaks add up "
            "fully).";
    if (close.size() > kMaxRows)
      out_ << " The " << kMaxRows << " with the largest combined peak of " << close.size()
           << "; all are in the GeoPackage's <code>nodes</code> layer.";
    out_ << "</p>\n<table id=\"coincident\">\n<thead><tr><th>confluence</th><th class=\"num\">combined peak ("
         << u_.q_unit() << ")</th><th>combined peak time</th><th>branches: peak (" << u_.q_unit()
         << ") at time</th><th class=\"num\">spread (h)</th><th class=\"num\">coincidence ratio</th></tr></thead>\n"
            "<tbody>\n";
    for (std::size_t k = 0; k < std::min(kMaxRows, close.size()); ++k) {
      const auto& n = *close[k];
      std::string branches;
      for (const auto& b : n.branches)
        branches += (branches.empty() ? "" : "<br>") +
                    esc(id(b.reach) + ": " + num(u_.q(b.peak_q_m3s), 2) + " at " + time(b.peak_time_s));
      out_ << "<tr><td>" << esc(n.node_id) << "</td><td class=\"num\">" << num(u_.q(n.peak_q_m3s), 2) << "</td><td>"
           << esc(time(n.peak_time_s)) << "</td><td>" << branches << "</td><td class=\"num\">"
           << num(n.branch_spread_s / 3600, 2) << "</td><td class=\"num\">" << num(n.coincidence_ratio, 2)
           << "</td></tr>\n";
    }
    out_ << "</tbody>\n</table>\n";
  }

  const ReportInputs& in_;
  const ReportModel& m_;
  const DisplayUnits& u_;
  std::ostringstream out_;
};

}  // namespace

void writePage(const std::filesystem::path& folder, const ReportInputs& in, const ReportModel& model) {
  const std::filesystem::path file = folder / "index.html";
  std::ofstream out(file, std::ios::binary);
  out << Page(in, model).html();
  out.close();
  if (!out) {
    InputLocation at;
    at.file = file.string();
    throw InputError(at, "cannot write the report page");
  }
}

}  // namespace reachwise::report::detail
