#pragma once
/// \file
/// The set-up of every routing method (private to src/routing). A set-up
/// checks the method's own inputs, chooses the grid, reports it and the
/// method's parameters in `ctx.numerics`, builds the method's cell and hands
/// it to the shared sweep (`sweepReach`, src/routing/Sweep.hpp).
/// ReachRouter::route does what every method shares before and after.
///
/// A new method: a value in routing::Method, a file here with its set-up,
/// and its declaration and case below.

#include "../Sweep.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/ReachRouter.hpp"

namespace reachwise::routing::methods {

using SetUp = void (*)(RouteContext& ctx);

void muskingum(RouteContext& ctx);      ///< Muskingum.cpp
void constantCunge(RouteContext& ctx);  ///< ConstantCunge.cpp
void variableCunge(RouteContext& ctx);  ///< VariableCunge.cpp
void diffusionWave(RouteContext& ctx);  ///< DiffusionWave.cpp

/// The set-up of `method` (a method without one does not compile: -Wswitch).
inline SetUp setUpFor(Method method) {
  switch (method) {
    case Method::Muskingum: return muskingum;
    case Method::ConstantParameter: return constantCunge;
    case Method::VariableParameter: return variableCunge;
    case Method::DiffusionWave: return diffusionWave;
  }
  throw InternalError("a routing method without a set-up");
}

}  // namespace reachwise::routing::methods
