#pragma once
/// \file
/// The directed reach graph: one vertex per reach record, one edge per
/// downstream link. The single place that touches Boost.Graph (only in
/// ReachGraph.cpp: this header includes no Boost); everything else asks it
/// domain-level questions (upstream of, outlets, cycles, ...).
///
/// Downstream links come from each record's `to_reach`. A reach that splits
/// (a bifurcation) names all its downstream reaches in `to_reach`, separated
/// by ';' or ',' (so reach ids cannot contain those characters); each of
/// those downstream reaches carries `split`, the share of the bifurcating
/// reach's outflow that enters it. The splits of one bifurcation must sum
/// to 1 within 1e-6 (checked by validate()). The shares the graph uses are
/// resolved once, when it is built (Splits.hpp: a run-file override, the
/// fields, or the default rule).

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/network/Splits.hpp"

namespace reachwise::network {

/// Largest absolute difference from 1 allowed for the splits of a bifurcation.
inline constexpr double kSplitSumTolerance = 1e-6;

/// Splits a `to_reach` value into downstream ids: separators ';' and ',',
/// blanks around ids ignored, empty pieces dropped, repeats dropped.
std::vector<std::string_view> parseDownstreamIds(std::string_view to_reach);

/// A `to_reach` id that names no reach in the table.
struct UnresolvedLink {
  std::uint32_t reach;     ///< vertex (= record index) that names it
  std::string to_reach;    ///< the id as written
};

/// A record whose id was already used by an earlier record.
struct DuplicateId {
  std::uint32_t reach;     ///< the later record
  std::uint32_t first;     ///< the record that owns the id
};

/// Weakly connected components (basins).
struct Components {
  std::vector<std::uint32_t> basin;   ///< per vertex, 0..count-1, numbered by lowest record
  std::uint32_t count = 0;
};

class ReachGraph {
public:
  /// Vertex = index of the record in the ReachTable.
  using Vertex = std::uint32_t;

  /// Builds the graph and resolves the shares of its bifurcations with
  /// `rules` (resolveSplits). `table` must outlive the graph (lengths,
  /// sections and lines are read from it, not copied). Never throws for bad
  /// topology: unknown ids and duplicates are kept for validate() to
  /// report; a duplicate id resolves to its first record. Throws InputError
  /// for an override in `rules` that does not fit the graph.
  explicit ReachGraph(const ReachTable& table, const SplitRules& rules = {});
  ReachGraph(ReachGraph&&) noexcept;
  ReachGraph& operator=(ReachGraph&&) noexcept;
  ~ReachGraph();

  const ReachTable& table() const noexcept { return *table_; }
  std::size_t size() const noexcept;
  std::size_t linkCount() const noexcept;

  // ---- ids ----
  std::optional<Vertex> find(std::string_view reach_id) const;
  const std::string& id(Vertex v) const { return record(v).id; }
  const ReachRecord& record(Vertex v) const { return table_->reaches[v]; }
  const std::vector<UnresolvedLink>& unresolvedLinks() const noexcept { return unresolved_; }
  const std::vector<DuplicateId>& duplicateIds() const noexcept { return duplicates_; }

  // ---- neighbours (in record order of the links) ----
  std::vector<Vertex> upstream(Vertex v) const;
  std::vector<Vertex> downstream(Vertex v) const;
  std::size_t upstreamCount(Vertex v) const;
  std::size_t downstreamCount(Vertex v) const;
  /// Share of `from`'s outflow entering `to`: 1 unless `from` bifurcates,
  /// then `to`'s resolved share (NaN when unresolved). Precondition: a link from→to.
  double fraction(Vertex from, Vertex to) const;

  // ---- bifurcations ----
  /// The shares of every bifurcation, as resolved when the graph was built.
  const SplitResolution& splits() const noexcept { return splits_; }
  /// The shares of the bifurcation below `v`; nullptr when `v` does not bifurcate.
  const BifurcationShares* sharesAt(Vertex v) const;
  /// The share `v` takes as a branch of a bifurcation (of the first
  /// bifurcating reach above it); NaN when it is no branch or its share is unresolved.
  double share(Vertex v) const;
  /// True when `to` is a side arm where it leaves `from`: `from` bifurcates
  /// and `to` is not its main branch. Precondition: a link from→to.
  bool leavesAsSideArm(Vertex from, Vertex to) const;

  // ---- classes of reaches, ascending ----
  std::vector<Vertex> headwaters() const;    ///< no upstream reach
  std::vector<Vertex> outlets() const;       ///< no downstream reach
  std::vector<Vertex> confluences() const;   ///< >= 2 upstream reaches
  std::vector<Vertex> bifurcations() const;  ///< >= 2 downstream reaches

  // ---- structure ----
  /// Reaches ordered so that every reach comes after all reaches upstream of
  /// it; nullopt when the graph has a cycle (including a self-loop).
  std::optional<std::vector<Vertex>> topologicalOrder() const;
  /// Each cycle as its reaches (ascending): strongly connected components of
  /// more than one reach, and reaches that drain into themselves. Cycles are
  /// ordered by their lowest reach.
  std::vector<std::vector<Vertex>> cycles() const;
  bool hasSelfLoop(Vertex v) const;
  /// Weakly connected components: reaches linked in either direction share a basin.
  Components components() const;

  // ---- geometry, oriented by the links ----
  /// True when the record's line is digitised against the flow, judged from
  /// the links: its first vertex is the one nearer the downstream reach (or,
  /// for an outlet, its last vertex is the one nearer an upstream reach).
  /// Reaches with no links keep their digitising order.
  bool flipped(Vertex v) const;
  Point2 top(Vertex v) const;      ///< upstream end point
  Point2 bottom(Vertex v) const;   ///< downstream end point

  /// Length in metres: the record's `length_m`, else its geometry length.
  double lengthM(Vertex v) const;

  /// Freezes into plain arrays in topological order. Throws InputError (naming
  /// the source and a reach of the first cycle) when the graph has a cycle.
  /// Call after validate() found no errors: unknown links are simply absent
  /// and missing splits become NaN fractions. Builds each reach's section
  /// (an InputError naming the reach and quantity when one is invalid).
  NetworkPlan freeze() const;

private:
  struct Links;  ///< the Boost.Graph adjacency list (ReachGraph.cpp)

  void indexIds();
  void addLinks();
  void useShares();

  const ReachTable* table_;
  std::unique_ptr<Links> links_;
  std::unordered_map<std::string_view, Vertex> index_;  ///< views into table_ ids
  std::vector<UnresolvedLink> unresolved_;
  std::vector<DuplicateId> duplicates_;
  SplitResolution splits_;
};

}  // namespace reachwise::network
