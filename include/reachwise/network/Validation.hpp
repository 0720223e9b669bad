#pragma once
/// \file
/// Checks of a reach network as a table and a graph: the same for a layer
/// read by io::readNetwork and for a table built in memory. The reader
/// reports only what is about reading (geometry, a value missing or not a
/// number, lengths); ranges of the values read are checked here.
///
/// Codes (docs/formats.md, "Problem codes"):
///   invalid_attribute          error    a value out of its range (slope <= 0, n <= 0,
///                                       width < 0, X outside [0, 0.5], ...), an id with ';' or ','
///   implausible_attribute      warning  n or slope above 0.3
///   duplicate_id               error    an id used by more than one record
///   unknown_to_reach           error    `to_reach` names no reach
///   zero_length                error    reach length (field or geometry) not > 0
///   non_finite_length          error    reach length (field or geometry) not finite
///   self_loop                  error    a reach drains into itself
///   cycle                      error    reaches that drain into each other (ids listed)
///   bifurcation_split_missing  error    a branch of a bifurcation has no `split` (some
///                                       branches have one, or default_split = "none")
///   bifurcation_split_range    error    a branch's `split` is outside [0, 1]
///   bifurcation_split_sum      error    a bifurcation's splits do not sum to 1 (1e-6)
///   split_unused               warning  `split` on a reach that is not a branch (not for a
///                                       piece of a cut line whose sibling piece is the branch)
///   basin                      info     one per basin (with its outlet) when a layer holds several
///   split_assumed              warning  a bifurcation without splits got shares by default_split
/// The shares checked are those the graph resolved (ReachGraph::splits()).

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"

namespace reachwise::network {

/// Every problem, in a stable order: the attributes of each record (in
/// record order), then the graph by code group, then record. Attribute
/// problems are located at the first vertex of the line as digitised, the
/// others at the reach end they concern.
ProblemList validate(const ReachGraph& graph);

/// Appends the problems of `more` that `into` does not already hold (same
/// code, feature and reach id; for a per-attribute code also the same
/// message), so that a check made by both the reader and the graph is
/// reported once.
void mergeProblems(ProblemList& into, const ProblemList& more);

}  // namespace reachwise::network
