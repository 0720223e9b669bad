#include "reachwise/run/Calibrate.hpp"

#include <fmt/format.h>
#include <nlopt.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <mutex>

#include <tbb/parallel_for_each.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/CalibratedWriter.hpp"
#include "reachwise/network/PlanPart.hpp"
#include "reachwise/routing/NetworkRouter.hpp"
#include "reachwise/routing/PartForcing.hpp"
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

/// Counts the routings of a calibration, from any thread, and tells the
/// caller after each one (one call at a time).
class RoutingCount {
public:
  RoutingCount(std::function<void(std::size_t, std::size_t)> tell, std::size_t most)
      : tell_(std::move(tell)), most_(most) {}
  void add() {
    std::lock_guard lock(mutex_);
    ++done_;
    if (tell_) tell_(done_, most_);
  }
  std::size_t done() const {
    std::lock_guard lock(mutex_);
    return done_;
  }
  /// Runs `f` one call at a time with the reports after each routing.
  template <class F>
  void serialised(F&& f) {
    std::lock_guard lock(mutex_);
    f();
  }

private:
  std::function<void(std::size_t, std::size_t)> tell_;
  std::size_t most_ = 0, done_ = 0;
  mutable std::mutex mutex_;
};

/// The lakes of `whole` that `part` routes: those whose outflowing reaches
/// all lie in it, renumbered. False when a lake has some of its outflowing
/// reaches in the part and some outside (the part cannot route it alone).
/// Terminal lakes take nothing a reach's outflow depends on; left out.
bool partLakes(const std::vector<routing::NetworkLake>& whole, const network::PlanPart& part,
               std::vector<routing::NetworkLake>& out) {
  const auto local = [&](std::uint32_t r) -> long {
    const auto it = std::lower_bound(part.whole.begin(), part.whole.end(), r);
    return it != part.whole.end() && *it == r ? it - part.whole.begin() : -1;
  };
  for (const routing::NetworkLake& lake : whole) {
    std::size_t inside = 0;
    for (const auto o : lake.outflow_reaches) inside += local(o) >= 0;
    if (inside == 0) continue;
    if (inside < lake.outflow_reaches.size()) return false;
    routing::NetworkLake l = lake;
    for (auto& o : l.outflow_reaches) o = static_cast<std::uint32_t>(local(o));
    l.inflow_reaches.clear();
    for (const auto u : lake.inflow_reaches)
      if (const long k = local(u); k >= 0) l.inflow_reaches.push_back(static_cast<std::uint32_t>(k));
    out.push_back(std::move(l));
  }
  return true;
}

}  // namespace

CalibrationResult calibrate(const CalibrateRequest& request) {
  const CalibrationSettings& settings = request.settings;
  checkSettings(settings);
  CalibrationResult out;
  out.network = loadNetwork(request.network);
  const LoadedNetwork& net = *out.network;
  out.plan = routablePlan(net);
  network::NetworkPlan& plan = out.plan;
  const RunForcing forcing(request.forcing, plan, net.config.forcingUnits(), &net.dropped_in_lake);
  out.axis = forcing.axis();
  if (request.gauges.observed.empty()) {
    InputLocation at;
    at.field = "observed";
    throw InputError(at, "calibration needs observed hydrographs (--observed)");
  }
  out.gauges = bindGauges(request.gauges, net, plan, out.axis, net.config.forcingUnits());
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
  const bool kx = settings.parameter == CalibrationParameter::MuskingumKX;
  if (kx && request.method != routing::Method::Muskingum)
    throw InvalidParameter("calibrate.parameter", "kx (Muskingum K and X) needs the muskingum method");

  const auto basins = subBasins(plan, used_reaches);
  // Upstream first: plan order of the gauges' reaches.
  std::vector<std::size_t> order(used.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return used_reaches[a] < used_reaches[b]; });

  const routing::NetworkRouteOptions whole_options =
      networkRouteOptions(net, plan, request.method, request.diffusion_below_ponce, request.grid_spread_budget,
                          request.threads);
  // Per sub-basin: the search budget, the start and the final routing;
  // then the whole network before and after.
  RoutingCount count(request.on_routing, used.size() * (settings.max_evaluations + 2) + 2);
  const auto routeWhole = [&]() {
    OutflowCapture capture(plan.size(), all_reaches);
    (void)routing::routeNetwork(plan, out.axis, forcing.provider(), whole_options, &capture);
    count.add();
    return capture;
  };
  {
    const OutflowCapture before = routeWhole();
    out.scores_before = scoreGauges(gauges, before, out.axis);
    for (const auto& g : gauges) out.outflow_before.push_back(before.outflow(g.reach));
  }

  // Which sub-basin holds each reach, and the reaches whose calibrated
  // outflow a sub-basin below takes at its boundary.
  std::vector<long> owner(plan.size(), -1);
  for (std::size_t k = 0; k < basins.size(); ++k)
    for (const auto r : basins[k]) owner[r] = static_cast<long>(k);
  std::vector<std::vector<double>> fixed_outflow(plan.size());
  std::vector<char> handed_on(plan.size(), 0);
  std::vector<std::vector<std::size_t>> needs(basins.size());
  std::vector<char> alone(basins.size(), 1);  // routed as a part of its own
  for (std::size_t k = 0; k < basins.size(); ++k) {
    const auto held = [&](std::uint32_t r) { return owner[r] == static_cast<long>(k); };
    // A lake with outflowing reaches on both sides of the cut (partLakes).
    bool ok = std::none_of(whole_options.lakes.begin(), whole_options.lakes.end(), [&](const routing::NetworkLake& l) {
      const auto inside = std::count_if(l.outflow_reaches.begin(), l.outflow_reaches.end(), held);
      return inside > 0 && static_cast<std::size_t>(inside) < l.outflow_reaches.size();
    });
    // The boundary: links into the sub-basin from reaches outside it.
    for (const auto r : basins[k])
      for (std::uint32_t u = plan.up_offset[r]; u < plan.up_offset[r + 1]; ++u) {
        const std::uint32_t from = plan.up_reach[u];
        if (held(from)) continue;
        const long o = owner[from];
        if (o < 0) ok = false;  // not held by a gauge above: cannot be fixed
        else needs[k].push_back(static_cast<std::size_t>(o)), handed_on[from] = 1;
      }
    if (!ok) {
      // Routed with the whole network, after every sub-basin above it.
      alone[k] = 0;
      needs[k].clear();
      for (const std::size_t j : order) {
        if (j == k) break;
        needs[k].push_back(j);
      }
    }
  }

  out.multiplier.assign(plan.size(), 1.0);
  out.muskingum_x.assign(plan.size(), std::numeric_limits<double>::quiet_NaN());
  out.sub_basins.resize(basins.size());
  struct Fitted {
    std::uint32_t reach;  // whole plan
    hydraulics::Section section;
    double muskingum_k_s, muskingum_x;
  };
  std::vector<std::vector<Fitted>> fitted(basins.size());

  // Fits sub-basin k on its own part of the plan as it stands (every
  // sub-basin it needs already calibrated and applied).
  const auto fit = [&](std::size_t k) {
    const Gauge& gauge = gauges[used[k]];
    SubBasinResult& sb = out.sub_basins[k];
    sb.gauge_id = gauge.gauge_id;
    sb.reach_id = gauge.reach_id;
    sb.reaches = basins[k];
    std::vector<std::uint32_t> everything;
    if (!alone[k]) {
      everything.resize(plan.size());
      for (std::uint32_t r = 0; r < plan.size(); ++r) everything[r] = r;
    }
    network::PlanPart part = network::planPart(plan, alone[k] ? basins[k] : everything);
    network::NetworkPlan& p = part.plan;
    routing::NetworkRouteOptions options = whole_options;
    options.lakes.clear();
    (void)partLakes(whole_options.lakes, part, options.lakes);
    options.base_flow_m3s = baseFlows(p);
    const routing::PartForcing part_forcing(forcing.provider(), part,
                                            [&](std::uint32_t from) -> const std::vector<double>& {
                                              return fixed_outflow[from];
                                            });
    // The reaches the fit varies (part indices), the gauge's, and those
    // whose outflow sub-basins below take.
    std::vector<std::uint32_t> varied, kept;
    std::uint32_t at_gauge = 0;
    for (std::uint32_t r = 0; r < p.size(); ++r) {
      const std::uint32_t w = part.whole[r];
      if (owner[w] == static_cast<long>(k)) varied.push_back(r);
      if (w == gauge.reach) at_gauge = r, kept.push_back(r);
      else if (handed_on[w] && owner[w] == static_cast<long>(k)) kept.push_back(r);
    }
    const std::vector<hydraulics::Section> base = p.section;
    const std::vector<double> base_k = p.muskingum_k_s;
    // The parameters: y[0] = log(multiplier), so that a ratio up weighs the
    // same as the ratio down; with kx also y[1] = X.
    const auto apply = [&](const std::vector<double>& y) {
      const double m = std::exp(y[0]);
      for (const auto r : varied) {
        if (kx) {
          p.muskingum_k_s[r] = base_k[r] * m;
          p.muskingum_x[r] = y[1];
        } else {
          p.section[r] = settings.parameter == CalibrationParameter::Roughness ? base[r].withRoughnessScaled(m)
                                                                                : base[r].withWidthScaled(m);
        }
      }
    };
    OutflowCapture capture(p.size(), kept);
    const auto score = [&](const std::vector<double>& y) {
      apply(y);
      (void)routing::routeNetwork(p, out.axis, part_forcing, options, &capture);
      count.add();
      ++sb.evaluations;
      return gauges::skill(gauge.observed, capture.outflow(at_gauge), out.axis.dt_s);
    };
    std::vector<double> lo{std::log(settings.lower)}, hi{std::log(settings.upper)}, start{0.0};
    if (kx) {
      // X between 0 and 0.5 (Muskingum's range); the start is the reaches' mean X.
      double x = 0;
      for (const auto r : varied) x += p.muskingum_x[r] / static_cast<double>(varied.size());
      lo.push_back(0.0);
      hi.push_back(0.5);
      start.push_back(std::isfinite(x) ? std::clamp(x, 0.0, 0.5) : 0.2);
    }
    sb.before = score(start);
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
    sb.after = score(best);  // leaves the part at its result
    for (const auto r : kept)
      if (part.whole[r] != gauge.reach || handed_on[gauge.reach]) fixed_outflow[part.whole[r]] = capture.outflow(r);
    // For the whole plan once every fit running beside this one is done.
    for (const auto r : varied) fitted[k].push_back({part.whole[r], p.section[r], p.muskingum_k_s[r], p.muskingum_x[r]});
    if (request.on_sub_basin) count.serialised([&] { request.on_sub_basin(sb); });
  };

  // Sub-basins whose needs are met are fitted side by side (each routes
  // its own part; the routing inside uses the threads as well).
  std::vector<char> done(basins.size(), 0);
  for (std::size_t n_done = 0; n_done < basins.size();) {
    std::vector<std::size_t> ready;
    for (const std::size_t k : order)
      if (!done[k] && std::all_of(needs[k].begin(), needs[k].end(), [&](std::size_t j) { return done[j] != 0; }))
        ready.push_back(k);
    REACHWISE_ASSERT(!ready.empty());
    tbb::parallel_for_each(ready.begin(), ready.end(), fit);
    for (const std::size_t k : ready) {
      done[k] = 1;
      const SubBasinResult& sb = out.sub_basins[k];
      for (const Fitted& f : fitted[k]) {
        plan.section[f.reach] = f.section;
        plan.muskingum_k_s[f.reach] = f.muskingum_k_s;
        plan.muskingum_x[f.reach] = f.muskingum_x;
        out.multiplier[f.reach] = sb.multiplier;
        out.muskingum_x[f.reach] = sb.muskingum_x;
      }
    }
    n_done += ready.size();
  }
  // Upstream first, as the gauges lie in the plan.
  std::vector<SubBasinResult> ordered;
  for (const std::size_t k : order) ordered.push_back(std::move(out.sub_basins[k]));
  out.sub_basins = std::move(ordered);

  std::vector<char> calibrated(plan.size(), 0);
  for (const auto& sb : out.sub_basins)
    for (const auto r : sb.reaches) calibrated[r] = 1;
  out.uncalibrated_reaches = static_cast<std::size_t>(std::count(calibrated.begin(), calibrated.end(), 0));

  // Every gauge on the calibrated network.
  const OutflowCapture after = routeWhole();
  out.scores = scoreGauges(gauges, after, out.axis);
  for (const auto& g : gauges) out.outflow_after.push_back(after.outflow(g.reach));
  out.evaluations = count.done();
  return out;
}

std::vector<io::CalibrationRow> calibrationRows(const CalibrationResult& result, const CalibrationSettings& settings) {
  std::vector<io::CalibrationRow> rows;
  for (const auto& sb : result.sub_basins)
    rows.push_back({sb.gauge_id, sb.reach_id, std::string(parameterName(settings.parameter)),
                    std::string(objectiveName(settings.objective)), sb.multiplier, settings.lower, settings.upper,
                    sb.at_bound, sb.reaches.size(), sb.evaluations, sb.before, sb.after,
                    objectiveScore(settings.objective, sb.before), objectiveScore(settings.objective, sb.after),
                    sb.muskingum_x});
  return rows;
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
  const std::vector<io::CalibrationRow> rows = calibrationRows(result, settings);
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
