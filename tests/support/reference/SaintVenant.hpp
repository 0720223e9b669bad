#pragma once
/// \file
/// Test support: a full dynamic-wave (Saint-Venant) solver, the reference
/// for the reaches where the diffusion wave (DiffusionWave.hpp) is not valid
/// (Ponce number T S0 (g/d)^(1/2) < 30, Ponce, Li & Simons 1978, from
/// memory: flat reaches and short waves, where the inertia terms the
/// diffusion wave drops matter). Like the diffusion-wave reference it shares
/// nothing with the router but hydraulics::Section (area, top width and
/// Manning discharge of the cross-section).
///
/// Equations (prismatic channel, bed slope S0, depth y(x, t), stage
/// h = z_bed(x) + y with dz_bed/dx = −S0), conservative form in (y, Q)
/// (Saint-Venant 1871; Cunge, Holly & Verwey 1980, *Practical Aspects of
/// Computational River Hydraulics*, ch. 2):
///   continuity  dA/dt + dQ/dx = 0
///   momentum    dQ/dt + d(beta Q^2/A)/dx + g A dh/dx + g A S_f = 0
///   friction    S_f = Q|Q| / K(y)^2, K = A R^(2/3)/n the Manning conveyance
///               (for a two-stage section the sum of its parts, Chow 1959
///               §6-8), read as K(y) = section.discharge(y) / S0^(1/2).
/// The momentum coefficient beta is 1 (uniform velocity over the section).
/// For the two-stage section the divided-channel value would be above 1
/// once the floodplain flows; the section does not expose its parts, and
/// beta = 1 keeps the equations the same for every shape.
///
/// Scheme: Preissmann's four-point implicit box scheme (Preissmann 1961;
/// Cunge, Holly & Verwey 1980 ch. 3, from memory), space weight psi = 1/2
/// and time weight theta (0.6 on a first grid: theta > 1/2 damps the
/// shortest waves, at the price of an error (theta − 1/2) dt, which
/// convergeSaintVenant shrinks as it refines), on nodes 0..M with the
/// unknowns (Q_j, y_j).
/// Every box j (between nodes j and j+1) gives a continuity and a momentum
/// equation, the boundaries one each; Newton's method with a backtracking
/// line search solves the nonlinear system every step, each Newton step a
/// banded (pentadiagonal) LU solve with partial pivoting. The continuity
/// equation of a box is its volume balance with the trapezoidal storage
/// dx (A_j + A_{j+1}) / 2, so over any run of boxes the storage changes by
/// exactly what enters minus what leaves (to the Newton tolerance and
/// round-off).
///
/// Boundaries: Q(0, t) = the inflow (linear between its samples); the
/// channel continues unchanged past x = L for a buffer (boxes growing
/// geometrically) and ends in the normal-flow rating Q = K(y) S0^(1/2), so
/// the outflow at x = L is that of a semi-infinite uniform channel (the
/// buffer's end reaches back only by diffusion, as in the diffusion-wave
/// reference, and the dynamic part of a disturbance is damped by friction
/// within a few kilometres, see convergeSaintVenant in SaintVenant.cpp). The flow must stay
/// subcritical (one condition at each end); SaintVenantRun::max_froude says
/// how far it was from critical.

#include <cstddef>
#include <span>
#include <vector>

#include "reachwise/hydraulics/Section.hpp"
#include "support/reference/Refinement.hpp"

namespace testsupport::reference {

struct SaintVenantGrid {
  std::size_t cells = 0;         ///< uniform boxes over [0, L]
  std::size_t substeps = 1;      ///< solver steps per inflow sample
  double buffer_m = 0;           ///< channel modelled past x = L
  double growth = 1.05;          ///< length ratio of consecutive buffer boxes
  double max_buffer_cell_m = 0;  ///< buffer boxes grow up to this (0: no limit), at least the reach's dx
  double theta = 0.6;            ///< Preissmann time weight
};

struct SaintVenantRun {
  std::vector<double> outflow_m3s;  ///< discharge at x = L at each inflow sample time
  // Volumes for the whole run, m^3 (the discharge of a step is the
  // theta-weighted mean of its ends, as the scheme uses it); storage is the
  // trapezoidal sum over the nodes.
  double inflow_m3 = 0;
  double outflow_m3 = 0;                ///< through x = L
  double storage_change_m3 = 0;         ///< over [0, L]
  double end_outflow_m3 = 0;            ///< through the end of the buffer
  double domain_storage_change_m3 = 0;  ///< over the whole modelled channel
  double max_froude = 0;                ///< largest Froude number at any node over [0, L] and the run
  std::size_t steps = 0;
  std::size_t newton_iterations = 0;
  std::size_t domain_nodes = 0;
};

/// Routes `inflow_m3s` (samples dt_s apart, linear in between) through a
/// uniform channel of the given section and length on the given grid,
/// starting from steady uniform flow at the first sample. Throws
/// std::runtime_error if Newton fails to converge or the flow turns
/// supercritical.
SaintVenantRun routeSaintVenant(const reachwise::hydraulics::Section& section, double length_m,
                                std::span<const double> inflow_m3s, double dt_s, const SaintVenantGrid& grid);

/// The Saint-Venant reference refined until its outflow peak settles.
using ConvergedSaintVenant = Converged<SaintVenantRun, SaintVenantGrid>;

/// Solves on a first grid chosen as for the diffusion wave (firstGrid in
/// Refinement.hpp, the same buffer), then halves dx and dt together until
/// the outflow peak changes by less than `tolerance` of its rise above the
/// first inflow sample, with at least `min_levels` grids (refineUntilSettled).
/// By default theta is 0.6 on the first grid and theta − 1/2 halves with
/// dt, so the sequence converges at second order and the last grid's error
/// is about a third of its last change; with `halve_theta_excess` off and
/// theta > 1/2 the scheme is first order in dt and the error about the last
/// change itself.
ConvergedSaintVenant convergeSaintVenant(const reachwise::hydraulics::Section& section, double length_m,
                                         std::span<const double> inflow_m3s, double dt_s, double rise_s,
                                         const Refinement& refinement = Refinement{.theta = 0.6,
                                                                                   .halve_theta_excess = true});

}  // namespace testsupport::reference
