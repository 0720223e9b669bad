// `mc`: Muskingum–Cunge with constant parameters, C and D at one reference
// flow per reach for the whole event (Cunge 1969; Ponce 1989, ch. 9).

#include "CungeReference.hpp"
#include "Methods.hpp"

namespace reachwise::routing::methods {

void constantCunge(RouteContext& ctx) {
  const CungeReference ref = cungeAtReference(ctx);
  const CungeParameters& p = ref.parameters;
  if (p.x_clamped) ctx.numerics.x_clamps = 1;
  if (ctx.q_peak_m3s > ctx.reach.section.capacity()) ctx.numerics.surcharge_cells = 1;
  ConstantCell cell{p.coefficients, p.k_s, p.x};
  sweepReach(ctx, cell, p.coefficients.nonNegative() ? Negatives::CannotOccur : Negatives::ClampAndCount);
}

}  // namespace reachwise::routing::methods
