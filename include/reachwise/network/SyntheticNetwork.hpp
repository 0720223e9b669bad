#pragma once
/// \file
/// Synthetic dendritic river networks and their storm forcing, for tests and
/// scale benchmarks (`reachwise synth`). Pure computation: writing them to a
/// GeoPackage and NetCDF is `io/SyntheticWriter.hpp`.
///
/// The tree is a uniform random spanning forest of a jittered rectilinear
/// grid of exactly N nodes, drawn with Wilson's algorithm (Wilson 1996,
/// "Generating random spanning trees more quickly than the cover time",
/// Proc. 28th ACM STOC). Each node is the upstream end of one reach, which
/// runs along a grid edge to the node it drains into (or, for the K roots
/// on the southern row, one step south to an outlet point). Grid edges of a
/// jittered grid cannot cross (the jitter stays inside a quarter of each
/// gap), so the lines are a planar drawing whose ends agree with the links.
/// Reaches are numbered in depth-first post-order from the outlets: every
/// reach comes after all reaches upstream of it and each subtree's reaches
/// are contiguous (in the layer and in the forcing file).
///
/// Determinism: one std::mt19937_64 seeded with `seed` (its output sequence
/// is fixed by the C++ standard) and our own uniform, log-uniform and
/// normal transforms; the standard library's distributions are not used
/// because their algorithms differ between implementations. Per-reach
/// storm jitter uses SplitMix64 of (seed, reach), so any subset of reaches
/// can be generated in any order.

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "reachwise/network/NetworkPlan.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::network {

struct SyntheticOptions {
  std::size_t reaches = 1000;      ///< exactly this many reaches, >= 1
  std::size_t outlets = 1;         ///< basins (roots on the southern row), 1..reaches
  std::uint64_t seed = 1;
  double origin_x_m = 300000.0;    ///< south-west corner of the grid (EPSG:32633 metres)
  double origin_y_m = 5000000.0;
};

inline constexpr std::uint32_t kSyntheticOutlet = 0xFFFFFFFFu;

/// One record per reach, structure of arrays (1M reaches ~ 150 MB).
struct SyntheticNetwork {
  std::vector<std::uint32_t> downstream;   ///< index of the reach drained into, or kSyntheticOutlet
  std::vector<double> length_m;            ///< planar length of the line
  std::vector<double> upstream_length_m;   ///< own length + all reaches upstream
  std::vector<double> slope;               ///< m/m
  std::vector<double> manning_n;           ///< s/m^(1/3)
  std::vector<double> bottom_width_m;
  std::vector<double> side_slope;          ///< horizontal per vertical
  std::vector<std::uint32_t> vertex_begin; ///< reach i's vertices: [vertex_begin[i], vertex_begin[i+1])
  std::vector<Point2> vertices;            ///< upstream end first (drawn in flow direction)
  double min_x_m = 0, max_x_m = 0, min_y_m = 0, max_y_m = 0;  ///< extent of all vertices

  std::size_t size() const noexcept { return downstream.size(); }
  std::span<const Point2> line(std::size_t reach) const {
    return {vertices.data() + vertex_begin[reach], vertices.data() + vertex_begin[reach + 1]};
  }
  /// Text id of reach `reach`: "R" followed by its index.
  static std::string id(std::size_t reach);
  /// Outlet reaches, ascending.
  std::vector<std::uint32_t> outlets() const;
};

/// Generates the network. Throws InvalidParameter for 0 reaches, more
/// outlets than reaches, or more than 2^32 - 2 reaches.
SyntheticNetwork generateSyntheticNetwork(const SyntheticOptions& options);

/// The network as the reader would hand it over (ids, links, lines,
/// lengths, trapezoid sections), for in-memory tests and benchmarks.
ReachTable toReachTable(const SyntheticNetwork& net);

/// A lake of a synthetic network: a small polygon around the node at the
/// top of reach `reach` (a confluence, or the junction of a reach with the
/// one it drains into), so the reaches ending there flow into it and
/// `reach` carries its outflow; a weir rule. Lake ids are "L<k>", k the
/// 0-based position (lakes ordered by `reach`).
struct SyntheticLake {
  std::uint32_t reach = 0;          ///< the outflowing reach
  double radius_m = 0;              ///< of the polygon's vertices around the node
  double crest_level_m = 0;
  double weir_length_m = 0;
  std::vector<Point2> ring;         ///< exterior ring, open (no repeated first vertex)
  /// Text id of lake `lake`: "L" followed by its index.
  static std::string id(std::size_t lake);
};

/// Places `count` lakes on distinct nodes that have at least one reach
/// flowing in, chosen uniformly from the seed (SplitMix64 of the seed and
/// a partial Fisher–Yates shuffle; the same lakes on any platform). Each
/// polygon is a regular 12-gon of radius 80–200 m around the node: less
/// than a third of the smallest distance between two nodes or a node and
/// an outlet point (0.8 × 700 m), so a lake holds the ends of its own
/// node's reaches and no other. Crest level 100 m; weir length half the
/// outflowing reach's bottom width, within 2–50 m. Throws
/// InvalidParameter("lakes") when the network has fewer such nodes.
std::vector<SyntheticLake> syntheticLakes(const SyntheticNetwork& net, std::size_t count, std::uint64_t seed);

/// A train of storms crossing the network from west to east over base flow.
/// Each storm's lateral inflow on a reach is a gamma-shaped pulse
/// q(τ) = peak (τ/tp)^(k-1) exp(-(k-1)(τ/tp - 1)) (peak 1 at τ = tp; the
/// two-parameter gamma unit hydrograph, Nash 1957, "The form of the
/// instantaneous unit hydrograph", IAHS Publ. 45), starting when the storm
/// front reaches the reach's midpoint.
struct SyntheticStorm {
  std::uint64_t seed = 1;
  double base_m3s_per_km = 0.01;     ///< base lateral inflow per km of reach
  double peak_m3s_per_km = 0.3;      ///< storm peak per km of reach (before jitter)
  double gamma_shape = 3.0;          ///< k of the pulse, > 1
  double period_s = 30 * 86400.0;    ///< one storm per period (a shorter run gets one storm)
};

/// Fills `out` (axis.steps values, m^3/s, finite, >= 0) with the lateral
/// inflow of `reach`. Storm timing is scaled to the run: the front starts at
/// 5 % of each storm period, crosses the network in 30 % of it, and the
/// pulse peaks max(2 dt, 4 % of the period) after the front.
void syntheticLateral(const SyntheticNetwork& net, std::size_t reach, const SyntheticStorm& storm,
                      const routing::TimeAxis& axis, std::span<double> out);

/// Inflow entering at the top of the headwater that starts the longest
/// flow path of each basin (standing for the catchment above the network):
/// that reach's base flow ×20 plus the storm pulse ×20, same timing.
struct SyntheticInflow {
  std::uint32_t reach;
  std::vector<double> discharge_m3s;
};
std::vector<SyntheticInflow> syntheticInflow(const SyntheticNetwork& net, const SyntheticStorm& storm,
                                             const routing::TimeAxis& axis);

}  // namespace reachwise::network
