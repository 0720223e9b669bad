#include "reachwise/run/Calibrate.hpp"

#include <fmt/format.h>
#include <nlopt.hpp>

#include <algorithm>
#include <cmath>
#include <map>

#include "reachwise/Error.hpp"
#include "reachwise/io/CalibratedWriter.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/run/Route.hpp"

namespace reachwise::run {

std::string_view parameterName(CalibrationParameter p) {
  switch (p) {
    case CalibrationParameter::Width:
      return "width";
    case CalibrationParameter::MuskingumKX:
      return "kx";
    case CalibrationParameter::Roughness:
      break;
  }
  return "n";
}

std::string_view objectiveName(Objective o) {
  switch (o) {
    case Objective::Nse:
      return "nse";
    case Objective::PeakWeightedNse:
      return "nse_peak";
    case Objective::Kge:
      break;
  }
  return "kge";
}

double objectiveScore(Objective o, const gauges::SkillScores& s) {
  switch (o) {
    case Objective::Nse:
      return s.nse;
    case Objective::PeakWeightedNse:
      return s.nse_peak_weighted;
    case Objective::Kge:
      break;
  }
  return s.kge;
}

std::vector<std::vector<std::uint32_t>> subBasins(const network::NetworkPlan& plan,
                                                  const std::vector<std::uint32_t>& gauge_reaches) {
  std::vector<std::size_t> order(gauge_reaches.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return gauge_reaches[a] < gauge_reaches[b]; });
  std::vector<char> held(plan.size(), 0);
  std::vector<std::vector<std::uint32_t>> basins(gauge_reaches.size());
  for (const std::size_t k : order) {
    const std::uint32_t g = gauge_reaches[k];
    if (held[g]) continue;  // a second gauge on the reach
    std::vector<std::uint32_t> stack{g};
    held[g] = 1;
    while (!stack.empty()) {
      const std::uint32_t r = stack.back();
      stack.pop_back();
      basins[k].push_back(r);
      for (std::uint32_t u = plan.up_offset[r]; u < plan.up_offset[r + 1]; ++u) {
        const std::uint32_t up = plan.up_reach[u];
        if (!held[up]) {
          held[up] = 1;
          stack.push_back(up);
        }
      }
    }
    std::sort(basins[k].begin(), basins[k].end());
  }
  return basins;
}

namespace {

void checkSettings(const CalibrationSettings& s) {
  if (!(std::isfinite(s.lower) && s.lower > 0))
    throw InvalidParameter("calibrate.lower", fmt::format("must be > 0, got {}", s.lower));
  if (!(std::isfinite(s.upper) && s.upper > s.lower))
    throw InvalidParameter("calibrate.upper", fmt::format("must be above lower ({}), got {}", s.lower, s.upper));
  if (s.max_evaluations < 4) throw InvalidParameter("calibrate.max_evaluations", "must be at least 4");
  if (!(s.tolerance > 0 && s.tolerance < 1))
    throw InvalidParameter("calibrate.tolerance", fmt::format("must lie in (0, 1), got {}", s.tolerance));
}

/// Routes the plan as it stands and keeps the gauges' outflow.
class Router {
public:
  Router(const CalibrateRequest& request, const LoadedNetwork& net, network::NetworkPlan& plan,
         const RunForcing& forcing, const std::vector<std::uint32_t>& gauge_reaches)
      : plan_(plan),
        forcing_(forcing),
        options_(networkRouteOptions(net, plan, request.method, request.diffusion_below_ponce, request.threads)),
        capture_(plan.size(), gauge_reaches) {}
  const OutflowCapture& route() {
    (void)routing::routeNetwork(plan_, forcing_.axis(), forcing_.provider(), options_, &capture_);
    ++routings_;
    if (on_routing_) on_routing_(routings_, most_);
    return capture_;
  }
  /// Reports each routing to `tell` against `most` routings in all.
  void report(std::function<void(std::size_t, std::size_t)> tell, std::size_t most) {
    on_routing_ = std::move(tell);
    most_ = most;
  }
  std::size_t routings() const { return routings_; }

private:
  network::NetworkPlan& plan_;
  const RunForcing& forcing_;
  routing::NetworkRouteOptions options_;
  OutflowCapture capture_;
  std::size_t routings_ = 0, most_ = 0;
  std::function<void(std::size_t, std::size_t)> on_routing_;
};

}  // namespace

CalibrationResult calibrate(const CalibrateRequest& request) {
  const CalibrationSettings& settings = request.settings;
  checkSettings(settings);
  CalibrationResult out;
  out.network = loadNetwork(request.network);
  const LoadedNetwork& net = *out.network;
  out.plan = routablePlan(net);
  network::NetworkPlan& plan = out.plan;
  const RunForcing forcing(request.forcing, plan, net.config.units, &net.dropped_in_lake);
  out.axis = forcing.axis();
  if (request.gauges.observed.empty()) {
    InputLocation at;
    at.field = "observed";
    throw InputError(at, "calibration needs observed hydrographs (--observed)");
  }
  out.gauges = bindGauges(request.gauges, net, plan, out.axis, net.config.units);
  const auto& gauges = out.gauges.gauges;

  // Gauges with enough observations are calibrated; the others are left out.
  std::vector<std::size_t> used;
  std::vector<std::uint32_t> used_reaches, all_reaches;
  std::map<std::uint32_t, std::string> reach_gauge;
  for (std::size_t g = 0; g < gauges.size(); ++g) {
    all_reaches.push_back(gauges[g].reach);
    const auto n = static_cast<std::size_t>(
        std::count_if(gauges[g].observed.begin(), gauges[g].observed.end(), [](double v) { return !std::isnan(v); }));
    if (n < settings.min_observations) {
      out.left_out.push_back(fmt::format("gauge {}: {} observations within the run (at least {} needed)",
                                         gauges[g].gauge_id, n, settings.min_observations));
      continue;
    }
    if (const auto it = reach_gauge.find(gauges[g].reach); it != reach_gauge.end()) {
      out.left_out.push_back(fmt::format("gauge {}: on reach {} with gauge {}, which is calibrated",
                                         gauges[g].gauge_id, gauges[g].reach_id, it->second));
      continue;
    }
    reach_gauge.emplace(gauges[g].reach, gauges[g].gauge_id);
    used.push_back(g);
    used_reaches.push_back(gauges[g].reach);
  }
  if (used.empty()) {
    InputLocation at;
    at.file = request.gauges.observed;
    throw InputError(at, fmt::format("no gauge has {} or more observations within the run; nothing to calibrate",
                                     settings.min_observations));
  }
  const auto basins = subBasins(plan, used_reaches);

  const bool kx = settings.parameter == CalibrationParameter::MuskingumKX;
  if (kx && request.method != routing::Method::Muskingum)
    throw InvalidParameter("calibrate.parameter", "kx (Muskingum K and X) needs the muskingum method");
  const std::vector<hydraulics::Section> base = plan.section;
  const std::vector<double> base_k = plan.muskingum_k_s;
  out.multiplier.assign(plan.size(), 1.0);
  out.muskingum_x.assign(plan.size(), std::numeric_limits<double>::quiet_NaN());
  // The parameters: y[0] = log(multiplier), so that a ratio up weighs the
  // same as the ratio down; with kx also y[1] = X.
  const auto apply = [&](const std::vector<std::uint32_t>& reaches, const std::vector<double>& y) {
    const double m = std::exp(y[0]);
    for (const auto r : reaches) {
      if (kx) {
        plan.muskingum_k_s[r] = base_k[r] * m;
        plan.muskingum_x[r] = y[1];
      } else {
        plan.section[r] = settings.parameter == CalibrationParameter::Roughness ? base[r].withRoughnessScaled(m)
                                                                              : base[r].withWidthScaled(m);
      }
    }
  };
  Router router(request, net, plan, forcing, all_reaches);
  // Per sub-basin: the search budget, the start and the final routing; then one for all gauges.
  router.report(request.on_routing, used.size() * (settings.max_evaluations + 2) + 1);

  // Upstream first: plan order of the gauges' reaches.
  std::vector<std::size_t> order(used.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return used_reaches[a] < used_reaches[b]; });
  for (const std::size_t k : order) {
    const Gauge& gauge = gauges[used[k]];
    SubBasinResult sb;
    sb.gauge_id = gauge.gauge_id;
    sb.reach_id = gauge.reach_id;
    sb.reaches = basins[k];
    const auto score = [&](const std::vector<double>& y) {
      apply(sb.reaches, y);
      const auto& capture = router.route();
      ++sb.evaluations;
      return gauges::skill(gauge.observed, capture.outflow(gauge.reach), out.axis.dt_s);
    };
    std::vector<double> lo{std::log(settings.lower)}, hi{std::log(settings.upper)}, start{0.0};
    if (kx) {
      // X between 0 and 0.5 (Muskingum's range); the start is the reaches' mean X.
      double x = 0;
      for (const auto r : sb.reaches) x += plan.muskingum_x[r] / static_cast<double>(sb.reaches.size());
      lo.push_back(0.0);
      hi.push_back(0.5);
      start.push_back(std::isfinite(x) ? std::clamp(x, 0.0, 0.5) : 0.2);
      sb.before = score(start);
    } else {
      sb.before = score(start);
    }
    for (std::size_t d = 0; d < start.size(); ++d) start[d] = std::clamp(start[d], lo[d], hi[d]);

    std::vector<double> best = start;
    double best_f = std::numeric_limits<double>::infinity();
    auto f = [&](const std::vector<double>& y, std::vector<double>&, void*) {
      const double value = 1.0 - objectiveScore(settings.objective, score(y));
      const double v = std::isfinite(value) ? value : std::numeric_limits<double>::max();
      if (v < best_f) best_f = v, best = y;
      return v;
    };
    using Fn = decltype(f);
    const auto call = [](const std::vector<double>& x, std::vector<double>& g, void* data) {
      return (*static_cast<Fn*>(data))(x, g, nullptr);
    };
    const auto dims = static_cast<unsigned>(start.size());
    const std::size_t global = std::max<std::size_t>(2, settings.max_evaluations * 2 / 3);
    // Global: DIRECT-L (Gablonsky & Kelley 2001, as implemented by NLopt):
    // deterministic, bounded, no start point needed.
    nlopt::opt direct(nlopt::GN_DIRECT_L, dims);
    direct.set_lower_bounds(lo);
    direct.set_upper_bounds(hi);
    direct.set_min_objective(call, static_cast<void*>(&f));
    direct.set_maxeval(static_cast<int>(global));
    direct.set_xtol_abs(settings.tolerance);
    std::vector<double> y = start;
    double fy = 0;
    try {
      direct.optimize(y, fy);
    } catch (const nlopt::roundoff_limited&) {
    }
    // Local polish: COBYLA (Powell 1994, as implemented by NLopt) from the best point.
    const std::size_t left = settings.max_evaluations > sb.evaluations ? settings.max_evaluations - sb.evaluations : 0;
    if (left >= 2) {
      nlopt::opt local(nlopt::LN_COBYLA, dims);
      local.set_lower_bounds(lo);
      local.set_upper_bounds(hi);
      local.set_min_objective(call, static_cast<void*>(&f));
      local.set_maxeval(static_cast<int>(left));
      local.set_xtol_abs(settings.tolerance);
      std::vector<double> step;
      for (std::size_t d = 0; d < dims; ++d) step.push_back(std::max(settings.tolerance * 10, (hi[d] - lo[d]) / 20));
      local.set_initial_step(step);
      y = best;
      try {
        local.optimize(y, fy);
      } catch (const nlopt::roundoff_limited&) {
      }
    }
    sb.multiplier = std::exp(best[0]);
    if (kx) sb.muskingum_x = best[1];
    for (std::size_t d = 0; d < dims; ++d)
      sb.at_bound = sb.at_bound || best[d] - lo[d] <= settings.tolerance || hi[d] - best[d] <= settings.tolerance;
    sb.after = score(best);  // leaves the sub-basin at its result
    for (const auto r : sb.reaches) {
      out.multiplier[r] = sb.multiplier;
      out.muskingum_x[r] = sb.muskingum_x;
    }
    if (request.on_sub_basin) request.on_sub_basin(sb);
    out.sub_basins.push_back(std::move(sb));
  }
  std::vector<char> calibrated(plan.size(), 0);
  for (const auto& sb : out.sub_basins)
    for (const auto r : sb.reaches) calibrated[r] = 1;
  out.uncalibrated_reaches = static_cast<std::size_t>(std::count(calibrated.begin(), calibrated.end(), 0));

  // Every gauge on the calibrated network.
  out.scores = scoreGauges(gauges, router.route(), out.axis);
  out.evaluations = router.routings();
  return out;
}

void writeCalibrated(const std::string& path, bool overwrite, const CalibrationResult& result,
                     const CalibrationSettings& settings, io::OutputCommit* into) {
  const LoadedNetwork& net = *result.network;
  const network::ReachGraph& graph = *net.graph;
  const network::NetworkPlan& plan = result.plan;
  std::vector<double> by_record(graph.size(), 1.0);
  std::vector<double> by_record_x(graph.size(), std::numeric_limits<double>::quiet_NaN());
  for (std::size_t i = 0; i < plan.size(); ++i) {
    by_record[plan.record[i]] = result.multiplier[i];
    by_record_x[plan.record[i]] = result.muskingum_x[i];
  }
  const bool roughness = settings.parameter == CalibrationParameter::Roughness;
  std::vector<io::PreparedReach> prepared(graph.size());
  for (network::ReachGraph::Vertex v = 0; v < graph.size(); ++v) {
    const network::ReachRecord& r = graph.record(v);
    io::PreparedReach& p = prepared[v];
    p.slope = r.section.bed_slope;
    p.slope_source = std::isnan(p.slope) ? "" : "field";
    p.up_elevation_m = r.up_elevation_m;
    p.down_elevation_m = r.down_elevation_m;
    p.elevation_source = std::isnan(r.up_elevation_m) ? "" : "field";
    p.section = r.section;
    const double m = by_record[v];
    const bool changed = m != 1.0;
    if (roughness) {
      p.section.manning_n *= m;
      p.section.floodplain_n *= m;  // NaN stays NaN
    } else if (settings.parameter == CalibrationParameter::MuskingumKX) {
    } else if (p.section.shape == hydraulics::Shape::Circle) {
      p.section.diameter_m *= m;
    } else {
      p.section.bottom_width_m *= m;
    }
    if (settings.parameter == CalibrationParameter::MuskingumKX) {
      p.section = r.section;  // the section is not what kx fits
      p.muskingum_k_h = r.muskingum_k_h * m;
      p.muskingum_x = std::isnan(by_record_x[v]) ? r.muskingum_x : by_record_x[v];
    }
    p.manning_n_source = roughness && changed ? "calibrated" : "field";
    p.bottom_width_source = !roughness && changed ? "calibrated" : "field";
    p.side_slope_source = "field";
    if (p.section.shape == hydraulics::Shape::TwoStage) p.bank_depth_source = "field";
  }
  std::vector<io::CalibrationRow> rows;
  for (const auto& sb : result.sub_basins)
    rows.push_back({sb.gauge_id, sb.reach_id, std::string(parameterName(settings.parameter)),
                    std::string(objectiveName(settings.objective)), sb.multiplier, settings.lower, settings.upper,
                    sb.at_bound, sb.reaches.size(), sb.evaluations, sb.before, sb.after,
                    objectiveScore(settings.objective, sb.before), objectiveScore(settings.objective, sb.after),
                    sb.muskingum_x});
  std::vector<io::GaugeOutput> gauges;
  const auto& bound = result.gauges.gauges;
  for (std::size_t g = 0; g < bound.size(); ++g) {
    const network::Point2 at = bound[g].point.value_or(plan.bottom[bound[g].reach]);
    gauges.push_back({bound[g].gauge_id, bound[g].reach_id, at.x, at.y, bound[g].snap_distance_m, result.scores[g],
                      nullptr, nullptr});
  }
  io::writeCalibratedGeoPackage(path, overwrite, graph, net.config, prepared, net.problems, rows, gauges,
                                result.axis.utc_offset_min, into);
}

}  // namespace reachwise::run
