#include "reachwise/routing/LevelPool.hpp"

#include <algorithm>
#include <cstdio>
#include <cmath>
#include <limits>
#include <utility>

#include "reachwise/Error.hpp"

// Level-pool routing by storage indication (modified Puls): Puls (1928);
// Chow, Maidment & Mays (1988) *Applied Hydrology* §8.2. See docs/methods.md.

namespace reachwise::routing {
namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();

std::string fmtNum(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.9g", v);
  return buf;
}

bool finite(double v) { return std::isfinite(v); }

/// Index i of the segment [x[i], x[i+1]] holding v (the right one at a
/// point), clamped to the first and last segments. x has >= 2 points.
std::size_t segment(const std::vector<double>& x, double v) {
  const auto it = std::upper_bound(x.begin(), x.end(), v);
  const std::size_t i = static_cast<std::size_t>(it - x.begin());
  if (i == 0) return 0;
  return std::min(i - 1, x.size() - 2);
}

/// Piecewise linear y(v): y[0] below x[0], the last segment extended above.
double interpolate(const std::vector<double>& x, const std::vector<double>& y, double v) {
  if (v <= x.front()) return y.front();
  const std::size_t i = segment(x, v);
  const double t = (v - x[i]) / (x[i + 1] - x[i]);
  return y[i] + t * (y[i + 1] - y[i]);
}

/// dy/dx just above v: 0 below x[0], the last segment's slope above.
double slopeAbove(const std::vector<double>& x, const std::vector<double>& y, double v) {
  if (v < x.front()) return 0.0;
  const std::size_t i = segment(x, v);
  return (y[i + 1] - y[i]) / (x[i + 1] - x[i]);
}

void checkTable(const std::vector<double>& x, const std::vector<double>& y, const std::string& quantity,
                const char* x_name, const char* y_name, bool y_strict) {
  if (x.size() != y.size())
    throw InvalidParameter(quantity, std::string("has ") + std::to_string(x.size()) + " " + x_name +
                                         " values but " + std::to_string(y.size()) + " " + y_name + " values");
  if (x.size() < 2) throw InvalidParameter(quantity, "needs at least two rows");
  for (std::size_t i = 0; i < x.size(); ++i) {
    if (!finite(x[i]) || !finite(y[i]))
      throw InvalidParameter(quantity, "row " + std::to_string(i + 1) + " is not finite");
    if (y[i] < 0)
      throw InvalidParameter(quantity, "row " + std::to_string(i + 1) + ": " + y_name + " " + fmtNum(y[i]) +
                                           " is negative");
    if (i == 0) continue;
    if (!(x[i] > x[i - 1]))
      throw InvalidParameter(quantity, std::string(x_name) + " must increase: row " + std::to_string(i + 1) +
                                           " has " + fmtNum(x[i]) + " after " + fmtNum(x[i - 1]));
    if (y_strict ? !(y[i] > y[i - 1]) : !(y[i] >= y[i - 1]))
      throw InvalidParameter(quantity, std::string(y_name) + (y_strict ? " must increase" : " must not decrease") +
                                           ": row " + std::to_string(i + 1) + " has " + fmtNum(y[i]) +
                                           " after " + fmtNum(y[i - 1]));
  }
}

}  // namespace

// ---- LevelStorage ----

LevelStorage LevelStorage::prismatic(double area_m2, double bottom_level_m) {
  if (!(area_m2 > 0) || !finite(area_m2))
    throw InvalidParameter("area_m2", "must be a finite area > 0 m2 (got " + fmtNum(area_m2) + ")");
  if (!finite(bottom_level_m)) throw InvalidParameter("bottom_level_m", "must be finite");
  LevelStorage s;
  // One segment of 1 m; above it the same area continues.
  s.level_ = {bottom_level_m, bottom_level_m + 1.0};
  s.storage_ = {0.0, area_m2};
  return s;
}

LevelStorage LevelStorage::table(std::vector<double> level_m, std::vector<double> storage_m3) {
  checkTable(level_m, storage_m3, "level_storage", "level", "storage", true);
  if (storage_m3.front() != 0)
    throw InvalidParameter("level_storage", "the first storage must be 0 (the empty lake), got " +
                                                fmtNum(storage_m3.front()));
  LevelStorage s;
  s.level_ = std::move(level_m);
  s.storage_ = std::move(storage_m3);
  return s;
}

double LevelStorage::storage(double level_m) const {
  if (level_m <= level_.front()) return 0.0;
  return interpolate(level_, storage_, level_m);
}

double LevelStorage::level(double storage_m3) const {
  if (storage_m3 <= 0) return level_.front();
  return interpolate(storage_, level_, storage_m3);
}

double LevelStorage::area(double level_m) const {
  return slopeAbove(level_, storage_, std::max(level_m, level_.front()));
}

// ---- OutflowRule ----

OutflowRule OutflowRule::weir(double crest_level_m, double length_m, double coefficient) {
  OutflowRule r;
  r.kind = Kind::Weir;
  r.crest_level_m = crest_level_m;
  r.weir_length_m = length_m;
  r.weir_coefficient = coefficient;
  return r;
}

OutflowRule OutflowRule::levelTable(std::vector<double> level_m, std::vector<double> outflow_m3s) {
  OutflowRule r;
  r.kind = Kind::LevelTable;
  r.x = std::move(level_m);
  r.outflow_m3s = std::move(outflow_m3s);
  return r;
}

OutflowRule OutflowRule::storageTable(std::vector<double> storage_m3, std::vector<double> outflow_m3s) {
  OutflowRule r;
  r.kind = Kind::StorageTable;
  r.x = std::move(storage_m3);
  r.outflow_m3s = std::move(outflow_m3s);
  return r;
}

OutflowRule OutflowRule::linear(double k_s) {
  OutflowRule r;
  r.kind = Kind::Linear;
  r.k_s = k_s;
  return r;
}

// ---- LevelPool ----

LevelPool::LevelPool(LevelStorage storage, OutflowRule rule, std::string name)
    : storage_(std::move(storage)), rule_(std::move(rule)), name_(std::move(name)) {
  const std::string who = name_.empty() ? std::string() : name_ + ": ";
  try {
    switch (rule_.kind) {
      case OutflowRule::Kind::None:
        throw InvalidParameter("outflow_rule",
                               "no outflow rule (give a weir, a level-outflow or storage-outflow table, or k_h)");
      case OutflowRule::Kind::Weir:
        if (!finite(rule_.crest_level_m)) throw InvalidParameter("crest_level_m", "must be finite");
        if (!(rule_.weir_length_m > 0) || !finite(rule_.weir_length_m))
          throw InvalidParameter("weir_length_m", "must be a finite length > 0 m (got " +
                                                      fmtNum(rule_.weir_length_m) + ")");
        if (!(rule_.weir_coefficient > 0) || !finite(rule_.weir_coefficient))
          throw InvalidParameter("weir_coefficient", "must be finite and > 0 m^0.5/s (got " +
                                                         fmtNum(rule_.weir_coefficient) + ")");
        if (rule_.crest_level_m < storage_.bottomLevel())
          throw InvalidParameter("crest_level_m", "crest " + fmtNum(rule_.crest_level_m) +
                                                      " m lies below the lake's bottom level " +
                                                      fmtNum(storage_.bottomLevel()) + " m");
        break;
      case OutflowRule::Kind::LevelTable:
        checkTable(rule_.x, rule_.outflow_m3s, "level_outflow", "level", "outflow", false);
        break;
      case OutflowRule::Kind::StorageTable:
        checkTable(rule_.x, rule_.outflow_m3s, "storage_outflow", "storage", "outflow", false);
        if (rule_.x.front() < 0)
          throw InvalidParameter("storage_outflow", "the first storage is negative (" + fmtNum(rule_.x.front()) + ")");
        break;
      case OutflowRule::Kind::Linear:
        if (!(rule_.k_s > 0) || !finite(rule_.k_s))
          throw InvalidParameter("k_h", "must be a finite time > 0 (got " + fmtNum(rule_.k_s / 3600) + " h)");
        break;
    }
    if (rule_.kind == OutflowRule::Kind::LevelTable || rule_.kind == OutflowRule::Kind::StorageTable) {
      const double o0 = outflowAtStorage(0.0);
      if (o0 != 0)
        throw InvalidParameter(rule_.kind == OutflowRule::Kind::LevelTable ? "level_outflow" : "storage_outflow",
                               "the outflow at the empty lake (level " + fmtNum(storage_.bottomLevel()) + " m) is " +
                                   fmtNum(o0) + " m3/s; the table's first outflow must be 0 at or above that level");
      // Outflow must rise somewhere, or no inflow could ever leave.
      if (!(rule_.outflow_m3s.back() > 0))
        throw InvalidParameter(rule_.kind == OutflowRule::Kind::LevelTable ? "level_outflow" : "storage_outflow",
                               "every outflow is 0");
    }
  } catch (const InvalidParameter& e) {
    if (who.empty()) throw;
    // Keep the quantity; put the lake in front of the message.
    std::string msg = e.what();
    const std::string prefix = e.quantity() + ": ";
    if (msg.rfind(prefix, 0) == 0) msg.erase(0, prefix.size());
    throw InvalidParameter(e.quantity(), who + msg);
  }
}

double LevelPool::outflowAtLevel(double level_m) const {
  switch (rule_.kind) {
    case OutflowRule::Kind::Weir: {
      const double head = level_m - rule_.crest_level_m;
      return head > 0 ? rule_.weir_coefficient * rule_.weir_length_m * head * std::sqrt(head) : 0.0;
    }
    case OutflowRule::Kind::LevelTable:
      return interpolate(rule_.x, rule_.outflow_m3s, level_m);
    default:
      return outflowAtStorage(storage_.storage(level_m));
  }
}

double LevelPool::outflowAtStorage(double s) const {
  s = std::max(s, 0.0);
  switch (rule_.kind) {
    case OutflowRule::Kind::Linear:
      return s / rule_.k_s;
    case OutflowRule::Kind::StorageTable:
      return interpolate(rule_.x, rule_.outflow_m3s, s);
    case OutflowRule::Kind::Weir:
    case OutflowRule::Kind::LevelTable:
      return outflowAtLevel(storage_.level(s));
    case OutflowRule::Kind::None:
      break;
  }
  return 0.0;
}

double LevelPool::outflowSlope(double s) const {
  s = std::max(s, 0.0);
  switch (rule_.kind) {
    case OutflowRule::Kind::Linear:
      return 1.0 / rule_.k_s;
    case OutflowRule::Kind::StorageTable:
      return slopeAbove(rule_.x, rule_.outflow_m3s, s);
    case OutflowRule::Kind::Weir: {
      const double h = storage_.level(s);
      const double head = h - rule_.crest_level_m;
      if (!(head > 0)) return 0.0;
      return 1.5 * rule_.weir_coefficient * rule_.weir_length_m * std::sqrt(head) / storage_.area(h);
    }
    case OutflowRule::Kind::LevelTable: {
      const double h = storage_.level(s);
      return slopeAbove(rule_.x, rule_.outflow_m3s, h) / storage_.area(h);
    }
    case OutflowRule::Kind::None:
      break;
  }
  return 0.0;
}

double LevelPool::responseTime(double s) const {
  const double d = outflowSlope(s);
  return d > 0 ? 1.0 / d : std::numeric_limits<double>::infinity();
}

double LevelPool::steadyStorage(double q) const {
  const std::string who = name_.empty() ? std::string() : name_ + ": ";
  if (!(q >= 0) || !finite(q))
    throw InvalidParameter("initial_level_m", who + "no steady state for an inflow of " + fmtNum(q) + " m3/s");
  // Bracket: O(lo) <= q < O(hi). O(0) = 0 (checked on construction).
  double lo = 0.0, hi = 1.0;
  int doublings = 0;
  while (!(outflowAtStorage(hi) > q)) {
    lo = hi;
    hi *= 2;
    if (++doublings > 1100 || !finite(hi))
      throw InvalidParameter("initial_level_m", who + "no level lets an outflow of " + fmtNum(q) +
                                                    " m3/s leave the lake (the outflow rule stays below it)");
  }
  // Bisection to adjacent doubles: the supremum of {S : O(S) <= q}.
  for (int it = 0; it < 2200; ++it) {
    const double mid = lo + 0.5 * (hi - lo);
    if (mid <= lo || mid >= hi) break;
    (outflowAtStorage(mid) > q ? hi : lo) = mid;
  }
  return lo;
}

bool LevelPool::aboveTable(double s) const {
  switch (rule_.kind) {
    case OutflowRule::Kind::StorageTable:
      return s > rule_.x.back();
    case OutflowRule::Kind::LevelTable:
      return storage_.level(s) > rule_.x.back();
    default:
      return false;
  }
}

namespace {

/// One storage-indication step of length h from (s0, o0) with inflows ia,
/// ib at its ends. Solves F(S) = 2S/h + O(S) = rhs. F is strictly
/// increasing (2/h > 0 and O is non-decreasing in S: storage rises with
/// level and no rule lets outflow fall as level rises), so the root is
/// unique; F(0) = 0 and F(rhs h/2) >= rhs bracket it. Safeguarded Newton:
/// a Newton step leaving the bracket, and every fourth step, is a
/// bisection. Returns false where rhs < 0 (the step is too long for the
/// lake's response: storage would go negative), the caller then sub-steps.
template <class Outflow, class Slope>
bool indicationStep(const Outflow& outflow, const Slope& slope, double s0, double o0, double ia, double ib,
                    double h, double& s1, double& o1) {
  const double rhs = (ia + ib - o0) + 2.0 * s0 / h;
  if (rhs < 0) return false;
  double lo = 0.0, hi = 0.5 * rhs * h;
  if (hi <= 0) {
    s1 = 0;
    o1 = outflow(0.0);
    return true;
  }
  double x = std::clamp(s0, lo, hi);
  const double tol = 8 * kEps * rhs;
  for (int it = 0; it < 400; ++it) {
    const double ox = outflow(x);
    const double fx = 2.0 * x / h + ox - rhs;
    if (std::abs(fx) <= tol) {
      s1 = x;
      o1 = ox;
      return true;
    }
    (fx > 0 ? hi : lo) = x;
    double next = x - fx / (2.0 / h + slope(x));
    if (it % 4 == 3 || !(next > lo && next < hi)) next = lo + 0.5 * (hi - lo);
    if (next <= lo || next >= hi) break;  // bracket down to adjacent doubles
    x = next;
  }
  // The bracket has closed to round-off: take the end with the smaller residual.
  const double flo = std::abs(2.0 * lo / h + outflow(lo) - rhs), fhi = std::abs(2.0 * hi / h + outflow(hi) - rhs);
  s1 = flo <= fhi ? lo : hi;
  o1 = outflow(s1);
  return true;
}

}  // namespace

double LevelPool::shortestResponseTime(double s_max) const {
  // dO/dS is piecewise continuous; between the tables' knots it is constant
  // (tables) or rises with head over a constant area (weir), so its largest
  // value on [0, s_max] is at s_max or on either side of a knot.
  std::vector<double> at{0.0, s_max};
  const auto addLevels = [&](const std::vector<double>& levels) {
    for (double h : levels) at.push_back(storage_.storage(h));
  };
  if (rule_.kind == OutflowRule::Kind::StorageTable) at.insert(at.end(), rule_.x.begin(), rule_.x.end());
  if (rule_.kind == OutflowRule::Kind::LevelTable) addLevels(rule_.x);
  if (rule_.kind == OutflowRule::Kind::Weir) at.push_back(storage_.storage(rule_.crest_level_m));
  const auto& knots = storage_.storageKnots();
  at.insert(at.end(), knots.begin(), knots.end());
  double slope = 0;
  for (double s : at) {
    if (s < 0 || s > s_max) continue;
    slope = std::max(slope, outflowSlope(s));
    slope = std::max(slope, outflowSlope(std::max(0.0, s * (1 - 1e-12) - 1e-9)));
  }
  return slope > 0 ? 1.0 / slope : std::numeric_limits<double>::infinity();
}

LevelPoolResult LevelPool::route(const std::vector<double>& inflow, double dt, const LevelPoolOptions& options) const {
  const std::string who = name_.empty() ? std::string() : name_ + ": ";
  if (!(dt > 0) || !finite(dt)) throw InvalidParameter("dt", who + "must be a finite step > 0 s");
  if (inflow.empty()) throw InvalidParameter("inflow", who + "has no samples");
  for (std::size_t i = 0; i < inflow.size(); ++i)
    if (!(inflow[i] >= 0) || !finite(inflow[i]))
      throw InvalidParameter("inflow", who + "sample " + std::to_string(i) + " is negative or not finite (" +
                                           fmtNum(inflow[i]) + ")");
  if (!(options.max_step_over_response > 0))
    throw InvalidParameter("max_step_over_response", who + "must be > 0");

  double s = 0;
  if (options.initial_storage_m3) {
    s = *options.initial_storage_m3;
    if (!finite(s) || s < 0)
      throw InvalidParameter("initial_storage_m3", who + "must be finite and >= 0 (got " + fmtNum(s) + ")");
  } else if (options.initial_level_m) {
    const double h0 = *options.initial_level_m;
    if (!finite(h0) || h0 < storage_.bottomLevel())
      throw InvalidParameter("initial_level_m", who + "must be finite and at or above the bottom level " +
                                                    fmtNum(storage_.bottomLevel()) + " m (got " + fmtNum(h0) + ")");
    s = storage_.storage(h0);
  } else {
    s = steadyStorage(inflow.front());
  }
  double o = outflowAtStorage(s);

  LevelPoolResult r;
  const std::size_t n = inflow.size();
  for (std::size_t i = 0; i + 1 < n; ++i) r.volume_in_m3 += 0.5 * dt * (inflow[i] + inflow[i + 1]);

  // The storages the run can reach, and the one sub-step grid for them.
  double s_cap = s + r.volume_in_m3;
  try {
    const double peak = *std::max_element(inflow.begin(), inflow.end());
    s_cap = std::min(s_cap, std::max(s, steadyStorage(peak)));
  } catch (const InvalidParameter&) {
    // No level passes the largest inflow: the lake may fill without bound.
  }
  r.response_time_min_s = shortestResponseTime(s_cap);
  const double k_real = std::ceil(dt / (options.max_step_over_response * r.response_time_min_s));
  if (options.substeps == 0 && k_real > static_cast<double>(options.max_substeps))
    throw Error(who + "level-pool routing would need more than " + std::to_string(options.max_substeps) +
                " sub-steps per step (shortest response time " + fmtNum(r.response_time_min_s) +
                " s against a step of " + fmtNum(dt) + " s)");
  if (options.substeps > 0) {  // a saved state's grid
    if (options.substeps > options.max_substeps)
      throw InvalidParameter("substeps", who + "more than " + std::to_string(options.max_substeps) + " sub-steps");
    r.substeps = options.substeps;
  } else {
    r.substeps = std::max<std::size_t>(1, static_cast<std::size_t>(k_real));
  }

  const auto outflow = [this](double x) { return outflowAtStorage(x); };
  const auto slope = [this](double x) { return outflowSlope(x); };
  r.outflow_m3s.reserve(n);
  r.level_m.reserve(n);
  r.storage_m3.reserve(n);
  const auto record = [&](double si, double oi) {
    r.outflow_m3s.push_back(oi);
    r.storage_m3.push_back(si);
    r.level_m.push_back(storage_.level(si));
    if (aboveTable(si)) ++r.samples_above_table;
  };
  record(s, o);
  const double s_start = s;

  for (std::size_t i = 0; i + 1 < n; ++i) {
    const double i0 = inflow[i], i1 = inflow[i + 1];
    for (std::size_t k = r.substeps;; k *= 2) {
      if (k > options.max_substeps)
        throw Error(who + "level-pool routing failed in step " + std::to_string(i) + " with " +
                    std::to_string(options.max_substeps) + " sub-steps");
      const double h = dt / static_cast<double>(k);
      double ss = s, oo = o, vol = 0;
      bool ok = true;
      for (std::size_t j = 0; j < k; ++j) {
        const double ia = i0 + (i1 - i0) * (static_cast<double>(j) / static_cast<double>(k));
        const double ib = i0 + (i1 - i0) * (static_cast<double>(j + 1) / static_cast<double>(k));
        double sn = 0, on = 0;
        if (!indicationStep(outflow, slope, ss, oo, ia, ib, h, sn, on)) {
          ok = false;
          break;
        }
        vol += 0.5 * h * (oo + on);
        ss = sn;
        oo = on;
      }
      if (!ok) continue;
      if (k != r.substeps) ++r.steps_refined;
      r.volume_out_m3 += vol;
      s = ss;
      o = oo;
      break;
    }
    record(s, o);
  }
  r.storage_change_m3 = s - s_start;
  r.volume_error_m3 = r.volume_in_m3 - r.volume_out_m3 - r.storage_change_m3;
  return r;
}

}  // namespace reachwise::routing
