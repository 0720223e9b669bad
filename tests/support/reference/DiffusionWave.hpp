#pragma once
/// \file
/// Test support: a conservative implicit zero-inertia (diffusion-wave)
/// solver, the reference the routing methods are measured against. It
/// shares nothing with the router but hydraulics::Section (area, top width
/// and Manning's conveyance of the cross-section).
///
/// Equations (prismatic channel, bed slope S0, depth y(x, t), stage
/// h = z_bed + y):
///   continuity     dA/dt + dQ/dx = q_L                  (Saint-Venant 1871;
///                  q_L the lateral inflow per metre, spread evenly over
///                  [0, L], none over the buffer)
///   zero inertia   S_f = S0 − dy/dx                     (the momentum equation
///                  without its two inertia terms: Hayami 1951; Ponce 1989,
///                  *Engineering Hydrology* ch. 9)
///   friction       Q = K(y) sgn(S_f) |S_f|^(1/2)        (Manning, K = A R^(2/3) / n;
///                  for a two-stage section the sum of its parts, Chow 1959 §6-8)
///
/// Scheme: finite volumes on the cross-section area (depth the unknown),
/// the theta method in time (theta = 1/2: Crank & Nicolson 1947), face flux
/// with the arithmetic mean of the two cells' conveyances and the
/// water-surface slope between their centres, Newton's method with a
/// backtracking line search on the tridiagonal system at every step. Fluxes are shared by neighbouring cells, so the storage
/// changes by exactly what enters minus what leaves (to the Newton
/// tolerance and round-off).
///
/// Boundaries: the inflow hydrograph is the flux through x = 0; the channel
/// continues unchanged past the reach's end x = L for a buffer (cells
/// growing geometrically) and ends with normal flow (dy/dx = 0), so the
/// outflow at x = L is that of a semi-infinite uniform channel (no
/// backwater from the boundary), which is what a routing method assumes.

#include <cstddef>
#include <span>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "support/reference/Refinement.hpp"

namespace testsupport::reference {

struct DiffusionWaveGrid {
  std::size_t cells = 0;      ///< uniform cells over [0, L]
  std::size_t substeps = 1;   ///< solver steps per inflow sample
  double buffer_m = 0;        ///< channel modelled past x = L
  double growth = 1.05;       ///< size ratio of consecutive buffer cells
  double max_buffer_cell_m = 0;  ///< buffer cells grow up to this (0: no limit), at least the reach's dx
  double theta = 0.5;         ///< time weighting of the fluxes
};

struct DiffusionWaveRun {
  std::vector<double> outflow_m3s;  ///< flux through x = L at each inflow sample time
  // Volumes over [0, L] for the whole run, m^3 (the flux of a step is the
  // theta-weighted mean of its ends, as the scheme uses it).
  double inflow_m3 = 0;   ///< top and lateral inflow
  double outflow_m3 = 0;
  double storage_change_m3 = 0;
  double end_outflow_m3 = 0;        ///< through the end of the buffer
  double domain_storage_change_m3 = 0;  ///< over the whole modelled channel
  std::size_t steps = 0;
  std::size_t newton_iterations = 0;
  std::size_t domain_cells = 0;
};

/// Routes `inflow_m3s` (samples dt_s apart, linear in between) through a
/// uniform channel of the given section and length on the given grid,
/// starting from steady uniform flow at the first sample. `lateral_m3s`
/// (empty, or samples at the same times): inflow over the whole reach,
/// spread evenly along it; its first sample must be 0 (the start is
/// uniform flow). Throws std::runtime_error if Newton fails to converge.
DiffusionWaveRun routeDiffusionWave(const reachwise::hydraulics::Section& section, double length_m,
                                    std::span<const double> inflow_m3s, double dt_s,
                                    const DiffusionWaveGrid& grid, std::span<const double> lateral_m3s = {});

/// The diffusion-wave reference refined until its outflow peak settles
/// (Refinement.hpp).
using ConvergedRun = Converged<DiffusionWaveRun, DiffusionWaveGrid>;

/// Solves on a grid, then halves dx and dt together until the outflow peak
/// changes by less than `tolerance` of its rise above the first inflow
/// sample (and at least `min_levels` grids were computed); the scheme is
/// second order in both, so the last grid's error is about a third of its
/// last change. With the diffusion length ell = nu / c = Q / (2 T S0 c)
/// over the inflow's range of flows, the first grid has at least 10 cells,
/// 16 per distance the wave travels in its rise time `rise_s` at the
/// largest celerity, and cells no longer than 4 ell_min (the central face
/// flux oscillates on cells many diffusion lengths long); the Courant number
/// is about 1 at the largest celerity. The buffer is the larger of L/2 and
/// 20 ell_max, its cells no longer than 2 ell_min. A grid on which Newton
/// fails is skipped (counted) and refined.
ConvergedRun convergeDiffusionWave(const reachwise::hydraulics::Section& section, double length_m,
                                   std::span<const double> inflow_m3s, double dt_s, double rise_s,
                                   const Refinement& refinement = {}, std::span<const double> lateral_m3s = {});

}  // namespace testsupport::reference
