#pragma once
/// \file
/// Graph-level checks of a reach network. Per-feature checks (geometry,
/// attributes, lengths) belong to the reader; these need the whole graph.
///
/// Codes (docs/formats.md, "Problem codes"):
///   duplicate_id               error    an id used by more than one record
///   unknown_to_reach           error    `to_reach` names no reach
///   zero_length                error    reach length (field or geometry) not > 0
///   self_loop                  error    a reach drains into itself
///   cycle                      error    reaches that drain into each other (ids listed)
///   bifurcation_split_missing  error    a branch of a bifurcation has no `split`
///   bifurcation_split_range    error    a branch's `split` is outside [0, 1]
///   bifurcation_split_sum      error    a bifurcation's splits do not sum to 1 (1e-6)
///   split_unused               warning  `split` on a reach that is not a branch
///   basin                      info     one per basin (with its outlet) when a layer holds several

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

/// Every graph-level problem, in a stable order (by code group, then record).
ProblemList validate(const ReachGraph& graph);

/// Appends the problems of `more` that `into` does not already hold (same
/// code, feature and reach id), so that a check made by both the reader and
/// the graph is reported once.
void mergeProblems(ProblemList& into, const ProblemList& more);

}  // namespace reachwise::network
