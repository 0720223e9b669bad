#include "CungeReference.hpp"

#include <algorithm>
#include <cmath>

#include "reachwise/Error.hpp"

namespace reachwise::routing::methods {

namespace {

/// The grid chosen, or as forced by the options. With only the sub-reach
/// count forced, the sub-steps follow from C <= 1 + D.
Grid cungeGrid(const RouteOptions& o, double length, double c, double t, double slope, double q,
               double dt) {
  if (o.subreaches == 0 && o.substeps == 0)
    return chooseCungeGrid(length, c, t, slope, q, dt, o.limits, kFlatInNewFloor);
  Grid g;
  g.subreaches = o.subreaches > 0 ? o.subreaches : chooseCungeGrid(length, c, t, slope, q, dt, o.limits, kFlatInNewFloor).subreaches;
  const double dx = length / g.subreaches;
  const double d = std::min(1.0, cellDiffusionRatio(q, t, slope, c, dx));
  g.substeps = o.substeps > 0 ? o.substeps
                              : static_cast<std::uint32_t>(std::max(1.0, std::ceil(c * dt / (dx * (1.0 + d)))));
  return g;
}

}  // namespace

CungeReference cungeAtReference(RouteContext& ctx) {
  // A pipe asked for more than it carries is evaluated just below its cap,
  // where the celerity is still positive.
  const hydraulics::Section& sec = ctx.reach.section;
  CungeReference r;
  r.q_m3s = std::min(ctx.q_ref_m3s, 0.99 * sec.capacity());
  const hydraulics::FlowState ref = sec.normalFlow(std::max(r.q_m3s, 1e-9));
  if (!(r.q_m3s >= 0) || !std::isfinite(r.q_m3s))
    throw InvalidParameter("discharge", "must be finite and >= 0");
  r.celerity_ms = ref.celerity_ms;
  r.top_width_m = ref.top_width_m;
  r.flat = r.celerity_ms * ctx.dt_s < diffusionLength(r.q_m3s, r.top_width_m, sec.bedSlope(), r.celerity_ms);
  const Grid g = cungeGrid(ctx.options, ctx.reach.length_m, r.celerity_ms, r.top_width_m, sec.bedSlope(),
                           r.q_m3s, ctx.dt_s);
  useGrid(ctx, r, g);
  const Coefficients& k = r.parameters.coefficients;
  ctx.numerics.grid_compromise =
      g.compromise || k.in_new < (r.flat ? kFlatInNewFloor : 0.0) - 1e-12 || k.in_old < 0 || k.out_old < 0;
  return r;
}

void useGrid(RouteContext& ctx, CungeReference& r, const Grid& g) {
  r.dx_m = ctx.reach.length_m / g.subreaches;
  r.dt_sub_s = ctx.dt_s / g.substeps;
  r.parameters = cungeParameters(r.celerity_ms, r.top_width_m, ctx.reach.section.bedSlope(), r.q_m3s, r.dx_m,
                                 r.dt_sub_s);
  const CungeParameters& p = r.parameters;
  ReachNumerics& num = ctx.numerics;
  num.subreaches = g.subreaches;
  num.substeps = g.substeps;
  num.dx_m = r.dx_m;
  num.dt_sub_s = r.dt_sub_s;
  num.celerity_ms = r.celerity_ms;
  num.courant = p.courant;
  num.cell_reynolds = p.cell_reynolds;
  num.x = p.x;
  num.k_s = p.k_s;
}

}  // namespace reachwise::routing::methods
