#pragma once
/// \file
/// What `mc` and `vpmc` share (private): Muskingum–Cunge parameters and the
/// grid at the reach's reference flow (Cunge 1969; Ponce 1989, ch. 9; see
/// docs/methods.md §4).

#include "../Sweep.hpp"
#include "reachwise/routing/Muskingum.hpp"

namespace reachwise::routing::methods {

struct CungeReference {
  double q_m3s = 0;     ///< the flow evaluated: Q_ref, for a pipe at most 0.99 Q_cap
  double celerity_ms = 0, top_width_m = 0;   ///< of uniform flow at q_m3s
  double dx_m = 0, dt_sub_s = 0;
  bool flat = false;    ///< cΔt < ℓ at q_m3s: in_new may go down to kFlatInNewFloor
  CungeParameters parameters;  ///< at q_m3s on the grid chosen
};

/// Evaluates the section at the reference flow, chooses the grid (or takes
/// the forced one) and reports both in `ctx.numerics`. Throws
/// InvalidParameter("discharge") for a forced reference flow below zero.
CungeReference cungeAtReference(RouteContext& ctx);

/// Puts `r` on grid `g` (Δx, Δt_sub and the parameters at the reference
/// flow) and reports it in `ctx.numerics` (all but `grid_compromise`).
void useGrid(RouteContext& ctx, CungeReference& r, const Grid& g);

}  // namespace reachwise::routing::methods
