#include "reachwise/routing/ReachRouter.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <utility>

#include "Sweep.hpp"
#include "methods/Methods.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/Peak.hpp"

namespace reachwise::routing {

namespace {

void checkSeries(const char* quantity, std::span<const double> s) {
  for (std::size_t i = 0; i < s.size(); ++i)
    if (!(s[i] >= 0) || !std::isfinite(s[i]))
      throw InvalidParameter(quantity, "sample " + std::to_string(i) + " is negative or not finite (" +
                                           std::to_string(s[i]) + ")");
}

void finishVolume(VolumeBalance& v, const Totals& t, double s0, double s1, double base_m3) {
  v.inflow_m3 = t.in;
  v.lateral_m3 = t.lat;
  v.outflow_m3 = t.out;
  v.storage_change_m3 = s1 - s0;
  v.base_m3 = base_m3;
  const double entered = t.in + t.lat;
  v.error_pct = entered > 0 ? 100.0 * (entered - t.out - (s1 - s0)) / entered : 0.0;
  v.event_error_pct = eventErrorPct(v);
}

/// The first cause that applies to a reach's X clamps (XClampCause);
/// `q_lo`, `q_hi` the range of its top + lateral inflow, `dt` the step.
XClampCause xClampCause(const ReachNumerics& num, const hydraulics::Section& section, double length,
                        double q_lo, double q_hi, double dt) {
  if (num.x_clamps == 0) return XClampCause::None;
  if (num.surcharge_cells > 0) return XClampCause::Surcharge;
  if (section.shape() == hydraulics::Shape::TwoStage) {
    const double q_bank = section.discharge(section.bankDepth());
    if (q_lo < q_bank && q_bank < q_hi) return XClampCause::BankFull;
  }
  if (num.celerity_ms * dt >= length) return XClampCause::Short;
  // The methods report D at the reference flow as clamped, so D > 1 + C shows as 1 + C.
  if (num.cell_reynolds >= 1.0 + num.courant) return XClampCause::Flat;
  return XClampCause::FlowRange;
}

/// How far the outflow leaves [lo, hi]: samples beyond it by more than
/// 1 % of hi − lo, and the farthest excursion in % of hi − lo.
void envelopeCheck(std::span<const double> out, double lo, double hi, ReachNumerics& num) {
  const double rise = hi - lo;
  if (!(rise > 0)) return;
  const double margin = 0.01 * rise;
  double worst = 0;
  for (const double q : out) {
    const double beyond = std::max(lo - q, q - hi);
    if (beyond > margin) ++num.envelope_exceedances;
    worst = std::max(worst, beyond);
  }
  num.envelope_excursion_pct = 100.0 * worst / rise;
}

/// A saved state a reach can start from (ReachRouter::route).
void checkState(const ReachState& st) {
  const auto bad = [](const std::string& why) { throw InvalidParameter("state", why); };
  if (st.method == Method::DiffusionWave) bad("is a diffusion-wave state, which cannot be continued");
  if (st.substeps == 0) bad("has no sub-steps");
  if (st.q_m3s.size() != std::size_t{st.subreaches} + 1)
    bad("has " + std::to_string(st.q_m3s.size()) + " section flows for " + std::to_string(st.subreaches) +
        " sub-reaches (needs " + std::to_string(st.subreaches + 1) + ")");
  for (std::size_t j = 0; j < st.q_m3s.size(); ++j)
    if (!(st.q_m3s[j] >= 0) || !std::isfinite(st.q_m3s[j]))
      bad("section flow " + std::to_string(j) + " is negative or not finite (" + std::to_string(st.q_m3s[j]) + ")");
  if (!(st.reference_q_m3s >= 0) || !std::isfinite(st.reference_q_m3s))
    bad("reference flow is negative or not finite");
  if (st.method == Method::VariableParameter &&
      (st.table_nodes < 3 || !(st.table_min_q_m3s > 0) || !(st.table_max_q_m3s > st.table_min_q_m3s) ||
       !std::isfinite(st.table_max_q_m3s)))
    bad("has no valid rating-table range (vpmc needs 0 < lowest < highest flow and at least 3 nodes)");
}

}  // namespace

const char* methodName(Method method) {
  switch (method) {
    case Method::VariableParameter: return "vpmc";
    case Method::ConstantParameter: return "mc";
    case Method::Muskingum: return "muskingum";
    case Method::DiffusionWave: return "diffusion";
  }
  throw InternalError("a routing method without a name");
}

const char* xClampCauseName(XClampCause cause) {
  switch (cause) {
    case XClampCause::None: return "";
    case XClampCause::Surcharge: return "surcharge";
    case XClampCause::BankFull: return "bank_full";
    case XClampCause::Short: return "short";
    case XClampCause::Flat: return "flat";
    case XClampCause::FlowRange: return "flow_range";
  }
  return "";
}

double eventErrorPct(const VolumeBalance& v) {
  const double entered = v.inflow_m3 + v.lateral_m3;
  const double event = entered - v.base_m3;
  if (!(entered > 0) || !(event > 1e-6 * entered)) return kNaN;
  return 100.0 * (entered - v.outflow_m3 - v.storage_change_m3) / event;
}

ReachRun ReachRouter::route(const ReachSpec& reach, std::span<const double> inflow,
                            std::span<const double> lateral, double dt, const RouteOptions& opt_in,
                            std::vector<double>& out, const ReachState* start) {
  routed_ = false;
  table_nodes_ = 0;
  // A dry saved state (no flows kept) starts the reach steady, as without one.
  if (start && start->subreaches == 0) start = nullptr;
  RouteOptions forced;
  if (start) {
    checkState(*start);
    // The state's numerics, not ones chosen from this run's inflow.
    forced = opt_in;
    forced.subreaches = start->subreaches;
    forced.substeps = start->substeps;
    forced.reference_q_m3s = start->reference_q_m3s;
  }
  const RouteOptions& opt = start ? forced : opt_in;
  if (!(dt > 0) || !std::isfinite(dt)) throw InvalidParameter("dt", "must be a finite step > 0 s");
  if (!(reach.length_m > 0) || !std::isfinite(reach.length_m))
    throw InvalidParameter("length", "must be a finite length > 0 m");
  if (inflow.empty()) throw InvalidParameter("inflow", "has no samples");
  if (!lateral.empty() && lateral.size() != inflow.size())
    throw InvalidParameter("lateral", "must have as many samples as the inflow");
  // One pass forms the total inflow, its range and the smallest top inflow
  // and finds whether any sample is bad; only then do the checks run again
  // sample by sample to name the first bad one.
  const std::size_t n_samples = inflow.size();
  total_.resize(n_samples);
  bool good = true;
  double q_base = inflow[0] + (lateral.empty() ? 0.0 : lateral[0]), q_peak = q_base;
  double q_in_min = inflow[0], q_in_max = inflow[0];
  double q_lat_min = lateral.empty() ? 0.0 : lateral[0], q_lat_max = q_lat_min;
  for (std::size_t i = 0; i < n_samples; ++i) {
    const double in = inflow[i], lat = lateral.empty() ? 0.0 : lateral[i];
    q_in_max = std::max(q_in_max, in);
    q_lat_min = std::min(q_lat_min, lat);
    q_lat_max = std::max(q_lat_max, lat);
    good &= (in >= 0) & (in <= std::numeric_limits<double>::max()) & (lat >= 0) &
            (lat <= std::numeric_limits<double>::max());
    const double t = in + lat;
    total_[i] = t;
    q_base = std::min(q_base, t);
    q_peak = std::max(q_peak, t);
    q_in_min = std::min(q_in_min, in);
  }
  if (!good) {
    checkSeries("inflow", inflow);
    checkSeries("lateral", lateral);
  }
  if (table_) spare_ = std::move(table_);  // keeps its storage for the next vpmc table
  table_.reset();

  const std::size_t n_steps = inflow.size();
  ReachRun run;
  const Peak in_peak = findPeak(total_);
  run.inflow_peak_m3s = in_peak.value;
  run.inflow_peak_index = in_peak.index;
  run.rise_s = riseSamples(total_) * dt;
  const double q_ref = std::isnan(opt.reference_q_m3s) ? q_base + 0.5 * (q_peak - q_base)
                                                       : opt.reference_q_m3s;
  // Flows above any the saving run saw (muskingum's numerics do not depend on the flow).
  if (start && start->method != Method::Muskingum) run.numerics.above_saved_flows = q_peak > 2.0 * q_ref;
  out.assign(n_steps, 0.0);
  ReachNumerics& num = run.numerics;
  num.reference_q_m3s = q_ref;
  if (!(q_peak > 0) && !start) return run;  // a dry reach stays dry (a saved state may drain)

  // The Ponce number of the event's wave (period 2 t_rise) at the mean
  // depth A/T of uniform flow at the reference flow; below the option's
  // limit `vpmc` hands the reach to the diffusion wave.
  const hydraulics::Section& sec = reach.section;
  // A real event only: round-off in a steady inflow is no flood.
  if (run.rise_s > 0 && q_peak - q_base > 1e-6 * q_peak) {
    const hydraulics::FlowState f = sec.normalFlow(std::min(q_ref, 0.99 * sec.capacity()));
    if (f.area_m2 > 0 && f.top_width_m > 0)
      num.ponce_number = 2.0 * run.rise_s * sec.bedSlope() * std::sqrt(9.81 * f.top_width_m / f.area_m2);
  }
  num.method = opt.method;
  if (opt.method == Method::VariableParameter && num.ponce_number < opt.diffusion_below_ponce)
    num.method = Method::DiffusionWave;
  // The diffusion wave has no surcharge model: a pipe above its capacity
  // is routed with vpmc (the reach's `method` says so).
  if (num.method == Method::DiffusionWave && sec.shape() == hydraulics::Shape::Circle &&
      q_peak > 0.99 * sec.capacity())
    num.method = Method::VariableParameter;
  if (start) num.method = start->method;  // the method the saved run used for the reach

  // The method's set-up: its grid, parameters and cell, then the shared sweep.
  RouteContext ctx{reach, opt, inflow, lateral, dt, q_ref, q_peak, q_in_min, q_, out, table_, spare_, num};
  ctx.rise_s = run.rise_s;
  ctx.start = start;
  methods::setUpFor(num.method)(ctx);
  routed_ = true;
  table_lo_ = ctx.table_min_q_m3s;
  table_hi_ = ctx.table_max_q_m3s;
  table_nodes_ = ctx.table_nodes;
  storage_end_ = ctx.storage_end_m3;

  // Ponce's ratios for a wave of period 2 t_rise and wavelength c T_w.
  if (run.rise_s > 0 && num.celerity_ms > 0) {
    const double wavelength = num.celerity_ms * 2.0 * run.rise_s;
    const double sigma_dx = 2.0 * std::numbers::pi * num.dx_m / wavelength;
    const ConvergenceRatios r = ponceConvergenceRatios(num.courant, num.x, sigma_dx);
    num.amplitude_ratio = r.amplitude;
    num.phase_ratio = r.phase;
  }
  // The outflow is the top and lateral inflow, each delayed and spread:
  // it stays between their lowest and their highest added.
  envelopeCheck(out, q_in_min + q_lat_min, q_in_max + q_lat_max, num);
  num.x_clamp_cause = xClampCause(num, reach.section, reach.length_m, q_base, q_peak, dt);
  // The initial flow over the run's duration, on the same steps as the totals.
  const double base_m3 = total_[0] * dt * static_cast<double>(n_steps - 1);
  finishVolume(run.volume, ctx.totals, ctx.storage_start_m3, ctx.storage_end_m3, base_m3);
  return run;
}

ReachState ReachRouter::endState(const ReachRun& run) const {
  ReachState st;
  st.method = run.numerics.method;
  st.reference_q_m3s = run.numerics.reference_q_m3s;
  if (!routed_) return st;  // dry: subreaches 0
  if (st.method == Method::DiffusionWave)
    throw InvalidParameter("state", "was routed with the diffusion wave, whose state is not saved (with vpmc, "
                                    "--diffusion-below 0 keeps every reach with Muskingum-Cunge)");
  st.subreaches = run.numerics.subreaches;
  st.substeps = run.numerics.substeps;
  st.table_nodes = table_nodes_;
  if (table_nodes_ > 0) {
    st.table_min_q_m3s = table_lo_;
    st.table_max_q_m3s = table_hi_;
  }
  st.q_m3s = q_;
  st.storage_m3 = storage_end_;
  return st;
}

void depthAndVelocityAt(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                        double q, double& depth, double& velocity) {
  if (table) {
    table->depthAndVelocity(q, depth, velocity);
    return;
  }
  const hydraulics::FlowState f = section.normalFlow(std::max(q, 0.0));
  depth = f.depth_m;
  velocity = f.velocity_ms;
}

void depthAndVelocity(const hydraulics::Section& section, const hydraulics::RatingTable* table,
                      std::span<const double> q, std::vector<double>& depth,
                      std::vector<double>& velocity) {
  depth.resize(q.size());
  velocity.resize(q.size());
  for (std::size_t i = 0; i < q.size(); ++i) depthAndVelocityAt(section, table, q[i], depth[i], velocity[i]);
}

}  // namespace reachwise::routing
