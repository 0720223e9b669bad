// `muskingum`: the reach's own K and X (McCarthy 1938; coefficients as in
// Chow, Maidment & Mays 1988, Applied Hydrology §8.4), on a grid of
// sub-reaches and sub-steps that keeps them non-negative where one exists.

#include <cmath>
#include <string>

#include "Methods.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/Muskingum.hpp"

namespace reachwise::routing::methods {

namespace {

/// The grid chosen for K and X, or as forced by the options.
Grid muskingumGrid(const RouteOptions& o, double k_s, double x, double dt) {
  Grid g = chooseMuskingumGrid(k_s, x, dt, o.limits);
  if (o.subreaches > 0) g.subreaches = o.subreaches;
  if (o.substeps > 0) g.substeps = o.substeps;
  if (o.subreaches > 0 || o.substeps > 0) g.compromise = false;
  return g;
}

}  // namespace

void muskingum(RouteContext& ctx) {
  const double k_s = ctx.reach.muskingum_k_s, x = ctx.reach.muskingum_x;
  // Absent (NaN) is told apart from out of range: the fix differs.
  const auto absent = [](const std::string& field, const std::string& what) {
    return InvalidParameter(field, "is absent: the muskingum method needs " + what +
                                       " on every reach (a layer field `" + field + "`, or `[network.fields] " +
                                       field + " = { default = ... }` in the run file), or choose another --method");
  };
  if (std::isnan(k_s)) throw absent("muskingum_k_h", "Muskingum K in hours");
  if (std::isnan(x)) throw absent("muskingum_x", "Muskingum X");
  if (!(k_s > 0) || !std::isfinite(k_s)) throw InvalidParameter("muskingum_k_h", "must be > 0");
  if (!(x >= 0 && x <= 0.5)) throw InvalidParameter("muskingum_x", "must lie in [0, 0.5]");
  const Grid g = muskingumGrid(ctx.options, k_s, x, ctx.dt_s);
  const double k_sub = k_s / g.subreaches, dts = ctx.dt_s / g.substeps;
  const Coefficients cf = muskingumCoefficients(k_sub, x, dts);
  ReachNumerics& num = ctx.numerics;
  num.subreaches = g.subreaches;
  num.substeps = g.substeps;
  num.grid_compromise = g.compromise;
  num.k_s = k_sub;
  num.x = x;
  num.courant = dts / k_sub;  // K = Δx / c, so Δt/K is the Courant number
  num.cell_reynolds = 1.0 - 2.0 * x;
  num.dx_m = ctx.reach.length_m / g.subreaches;
  num.celerity_ms = num.dx_m / k_sub;
  num.dt_sub_s = dts;
  ConstantCell cell{cf, k_sub, x};
  sweepReach(ctx, cell, cf.nonNegative() ? Negatives::CannotOccur : Negatives::ClampAndCount);
}

}  // namespace reachwise::routing::methods
