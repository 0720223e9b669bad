#pragma once
/// \file
/// Test support: what the reference solvers (DiffusionWave.hpp,
/// SaintVenant.hpp) share: the inflow read between its samples, the cells of
/// a reach followed by a buffer of growing cells, the first grid chosen from
/// the wave's scales, and the refinement loop that halves dx and dt together
/// until the outflow peak settles.

#include <cmath>
#include <cstddef>
#include <span>
#include <stdexcept>
#include <utility>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "support/reference/Hydrograph.hpp"

namespace testsupport::reference {

/// Flow at time t of a series sampled every dt, linear in between (the
/// last sample after the end).
double sampleAt(std::span<const double> q, double dt, double t);

/// Cell (or box) lengths: `cells` uniform over [0, L], then a buffer of at
/// least `buffer_m` whose lengths start at growth x dx and grow by `growth`
/// per cell up to max(dx, max_cell_m) (max_cell_m = 0: no limit).
std::vector<double> cellLengths(double length_m, std::size_t cells, double buffer_m, double growth,
                                double max_cell_m);

/// How the reference solvers refine their grids.
struct Refinement {
  double tolerance = 5e-4;            ///< on the peak change relative to the peak's rise
  std::size_t min_levels = 3;         ///< at least two refinements, so one coincidence cannot pass
  std::size_t max_levels = 7;
  std::size_t first_cells = 0;        ///< 0: from the wave length (see firstGrid)
  std::size_t first_substeps = 0;     ///< 0: Courant number about 1 at the largest celerity
  double theta = 0.5;                 ///< time weighting of the scheme (on the first grid)
  /// Halve theta − 1/2 with every refinement as well: the theta scheme's
  /// leading error, (theta − 1/2) dt, then shrinks like dt^2 and the
  /// sequence of grids converges at second order, while the coarse grids
  /// keep the damping of theta > 1/2.
  bool halve_theta_excess = false;
};

/// The first grid of a refinement: with the diffusion length
/// ell = nu / c = Q / (2 T S0 c) over the inflow's range of flows, at least
/// 10 cells, 16 per distance the wave travels in its rise time `rise_s` at
/// the largest kinematic celerity, and cells no longer than 4 ell_min; the
/// Courant number about 1 at the largest celerity. The buffer is the larger
/// of L/2 and 20 ell_max, its cells no longer than 2 ell_min.
struct FirstGrid {
  std::size_t cells = 0;
  std::size_t substeps = 1;
  double buffer_m = 0;
  double max_buffer_cell_m = 0;
};
FirstGrid firstGrid(const reachwise::hydraulics::Section& section, double length_m,
                    std::span<const double> inflow, double dt_s, double rise_s, const Refinement& refinement);

/// A refined reference run: the result on the finest grid computed and how
/// the refinement went.
template <class Run, class Grid>
struct Converged {
  Run run;
  Grid grid;                          ///< the finest grid, whose result is `run`
  std::size_t levels = 0;             ///< grids computed
  std::size_t failed_levels = 0;      ///< grids on which Newton failed (too coarse), skipped
  double last_peak_change = 0;        ///< |peak_l − peak_{l−1}| / (peak_l − base) of the last refinement
  double last_time_change_s = 0;      ///< shift of the peak time in the last refinement
  bool converged = false;             ///< last_peak_change < tolerance
};

/// Runs `route(grid)` (a Run with `outflow_m3s` sampled dt_s apart, or
/// std::runtime_error when Newton fails) on `grid`, then with grid.cells
/// and grid.substeps doubled (and grid.theta − 1/2 halved if
/// `halve_theta_excess`), until the outflow peak changes by less than
/// `tolerance` of its rise above `base` and at least `min_levels` grids
/// were computed. A grid that fails is counted and refined; the change is
/// then measured from the next two grids that succeed.
template <class Run, class Grid, class Route>
Converged<Run, Grid> refineUntilSettled(Grid grid, double base, double dt_s, const Refinement& refinement,
                                        Route&& route) {
  Converged<Run, Grid> out;
  const auto refine = [&] {
    grid.cells *= 2;
    grid.substeps *= 2;
    if (refinement.halve_theta_excess) grid.theta = 0.5 + 0.5 * (grid.theta - 0.5);
  };
  double last_peak = 0, last_index = 0;
  bool have_last = false;
  for (std::size_t level = 0; level < refinement.max_levels; ++level) {
    out.levels = level + 1;
    Run run;
    try {
      run = route(grid);
    } catch (const std::runtime_error&) {
      // Too coarse for a steep front: refine and go on.
      ++out.failed_levels;
      have_last = false;
      refine();
      continue;
    }
    const SeriesPeak p = peakOf(run.outflow_m3s);
    out.run = std::move(run);
    out.grid = grid;
    if (have_last) {
      out.last_peak_change = std::abs(p.value - last_peak) / (p.value - base);
      out.last_time_change_s = std::abs(p.index - last_index) * dt_s;
      if (out.last_peak_change < refinement.tolerance && out.levels >= refinement.min_levels) {
        out.converged = true;
        break;
      }
    }
    last_peak = p.value;
    last_index = p.index;
    have_last = true;
    refine();
  }
  return out;
}

}  // namespace testsupport::reference
