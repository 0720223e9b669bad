#pragma once
/// \file
/// How the outflow of each bifurcation is shared among its branches: one
/// step, run when the reach graph is built (ReachGraph's constructor), that
/// every later step reads (validation, Strahler order, the plan routing
/// uses, the outputs). A bifurcation's shares come, first that applies,
/// from
///  1. an override in the run file (`[[network.split]]`, SplitOverride);
///  2. the `split` field of its branches, when every branch has one;
///  3. the default rule (`default_split`, DefaultSplit) when no branch has
///     one: shares by bottom width, equal shares, or none (an error).
/// A bifurcation where some branches have a split and others not is left
/// unresolved (validate() reports each missing branch). The user's records
/// are not changed: the shares live beside them (docs/formats.md,
/// "Bifurcations").

#include <cstddef>
#include <cstdint>
#include <string>
#include <utility>
#include <vector>

namespace reachwise::network {

class ReachGraph;

/// What a bifurcation whose branches carry no `split` value gets.
enum class DefaultSplit : std::uint8_t {
  Width,  ///< shares in proportion to the branches' bottom width (diameter for pipes), else equal
  Equal,  ///< equal shares
  None,   ///< no shares: `bifurcation_split_missing` errors
};

/// Its name in run files and messages: "width", "equal", "none".
const char* defaultSplitName(DefaultSplit rule);

/// One `[[network.split]]` table: the shares of the bifurcation below reach `at`.
struct SplitOverride {
  std::string at;                                       ///< the reach flowing into the bifurcation
  std::vector<std::pair<std::string, double>> shares;   ///< outgoing reach id, its share (as written)
  std::string key;                                      ///< where it was given ("network.split[1]")
};

struct SplitRules {
  DefaultSplit fallback = DefaultSplit::Width;
  std::vector<SplitOverride> overrides;
  std::string origin;  ///< the run file the overrides come from (messages)
};

/// Where the shares of one bifurcation came from.
enum class ShareSource : std::uint8_t {
  Override,  ///< the run file
  Field,     ///< the branches' `split` values
  Width,     ///< default_split = "width", by bottom width
  Equal,     ///< default_split = "equal", or "width" with a width missing or zero
  Missing,   ///< unresolved: some or all branches have no split (an error)
};

/// The shares of one bifurcation.
struct BifurcationShares {
  std::uint32_t at = 0;                  ///< the bifurcating reach (graph vertex)
  std::vector<std::uint32_t> branches;   ///< its downstream reaches, in link order
  std::vector<double> share;             ///< per branch; NaN where Missing and not given
  ShareSource source = ShareSource::Field;
  /// Index into `branches` of the main branch: the largest share (ties:
  /// the widest, then the lowest id). The others are side arms.
  std::size_t main = 0;
};

/// The shares of every bifurcation of a graph.
struct SplitResolution {
  std::vector<BifurcationShares> bifurcations;   ///< by ascending `at`
  DefaultSplit fallback = DefaultSplit::Width;   ///< the rule that applied (SplitRules::fallback)
  /// Per vertex: the record's `split` is not used here because it is a
  /// piece `<line>.k` of a cut line and another piece of the same line,
  /// carrying the same value, is the branch of a bifurcation (the pieces
  /// copy their line's attributes). No `split_unused` is reported for it.
  std::vector<bool> piece_split;
};

/// Resolves the shares of every bifurcation of `graph` (see the file
/// comment). Throws InputError naming `rules.origin` and the override's key
/// when an override names no reach (`at`), a reach that does not bifurcate,
/// a reach that is not one of its branches or leaves a branch out, gives a
/// negative share, or shares that do not sum to 1 (within
/// kSplitSumTolerance); also when two overrides name the same reach.
SplitResolution resolveSplits(const ReachGraph& graph, const SplitRules& rules);

}  // namespace reachwise::network
