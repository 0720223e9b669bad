#pragma once
/// \file
/// Muskingum and Muskingum–Cunge coefficients, the choice of sub-reaches and
/// sub-steps that keeps them non-negative, and Ponce's accuracy ratios.
///
/// Muskingum: McCarthy (1938); coefficients as in Chow, Maidment & Mays
/// (1988) *Applied Hydrology*, §8.4. Muskingum–Cunge: Cunge (1969), *J.
/// Hydraulic Research* 7(2), 205–230; Ponce (1989) *Engineering Hydrology*,
/// ch. 9. See docs/methods.md.
///
/// These are kernels: their arguments are checked once by the router, and a
/// violated precondition throws InternalError (REACHWISE_ASSERT).

#include <cstdint>

namespace reachwise::routing {

/// One cell's update, O(n+1) = in_new I(n+1) + in_old I(n) + out_old O(n)
/// + lateral · q_L Δx, where q_L Δx (m^3/s) is the lateral inflow entering
/// the cell during the step. in_new + in_old + out_old = 1.
struct Coefficients {
  double in_new = 0, in_old = 0, out_old = 0, lateral = 0;
  bool nonNegative() const { return in_new >= 0 && in_old >= 0 && out_old >= 0; }
  double sum() const { return in_new + in_old + out_old; }
};

/// Muskingum coefficients for storage constant K (s), weight X and step Δt (s):
///   den = K(1 − X) + Δt/2, C1 = (Δt/2 − K X)/den, C2 = (Δt/2 + K X)/den,
///   C3 = (K(1 − X) − Δt/2)/den, lateral = Δt/den.
/// Preconditions: K and Δt finite and > 0, X in [0, 0.5].
Coefficients muskingumCoefficients(double k_s, double x, double dt_s);

/// Cell diffusion ratio (the cell Reynolds number) of Muskingum–Cunge,
///   D = Q / (T S0 c Δx):
/// the channel's hydraulic diffusivity ν = Q/(2 T S0) over c Δx / 2, so that
/// X = (1 − D)/2 makes the scheme's numerical diffusion c Δx (1/2 − X) equal
/// to ν (Cunge 1969; Ponce 1989, ch. 9). The one place the quotient is written.
inline double cellDiffusionRatio(double q_m3s, double top_width_m, double bed_slope,
                                 double celerity_ms, double dx_m) {
  return q_m3s / (top_width_m * bed_slope * celerity_ms * dx_m);
}

/// The diffusion length ℓ = Q / (T S0 c) (m): the Δx at which D = 1, i.e.
/// D Δx. Evaluated as D at Δx = 1 m (a factor 1 rounds nothing).
inline double diffusionLength(double q_m3s, double top_width_m, double bed_slope,
                              double celerity_ms) {
  return cellDiffusionRatio(q_m3s, top_width_m, bed_slope, celerity_ms, 1.0);
}

/// D in the factored form the variable-parameter cell uses: 1/(T c) as the
/// rating table keeps it, times Q/(S0 Δx) with 1/(S0 Δx) formed once per
/// reach, so the cell has no division. The same quantity as
/// cellDiffusionRatio, rounded differently (a few units in the last place
/// apart, MuskingumTest), so the two forms are not interchangeable where
/// results must stay bit for bit.
inline double cellDiffusionRatioFactored(double q_m3s, double inv_width_celerity,
                                         double inv_slope_dx) {
  return inv_width_celerity * (q_m3s * inv_slope_dx);
}

/// Cunge's parameters for one sub-reach at reference flow Q (Cunge 1969):
///   K = Δx / c,  X = (1 − D)/2,  C = c Δt / Δx,  D = cellDiffusionRatio.
/// X may be negative; D > 1 + C (where the in_old coefficient would go
/// negative) is taken as 1 + C (X = −C/2). Preconditions: c, T, S0, Δx, Δt
/// finite and > 0; Q finite and >= 0.
struct CungeParameters {
  double k_s = 0, x = 0, courant = 0, cell_reynolds = 0;
  bool x_clamped = false;  ///< D > 1 + C was taken as 1 + C (less diffusion than the channel's)
  Coefficients coefficients;
};
CungeParameters cungeParameters(double celerity_ms, double top_width_m, double bed_slope,
                                double q_ref_m3s, double dx_m, double dt_s);

/// Coefficients from Courant number C and cell Reynolds number D:
///   den = 1 + C + D, C0 = (−1 + C + D)/den, C1 = (1 + C − D)/den,
///   C2 = (1 − C + D)/den, C3 = 2C/den  (Ponce 1989, eq. 9-62 form).
inline Coefficients cungeCoefficients(double courant, double cell_reynolds) {
  const double inv = 1.0 / (1.0 + courant + cell_reynolds);
  return Coefficients{(-1.0 + courant + cell_reynolds) * inv, (1.0 + courant - cell_reynolds) * inv,
                      (1.0 - courant + cell_reynolds) * inv, 2.0 * courant * inv};
}

/// The lowest in_new coefficient the Cunge methods accept on a flat reach,
/// one where the wave moves less than its diffusion length ℓ in a step
/// (cΔt < ℓ at the reference flow); elsewhere every coefficient stays
/// non-negative. On a flat reach the wave's own diffusion smooths the small
/// negative lobe a slightly negative in_new leaves (dips ahead of the wave
/// of at most 1 % of the rise on the accuracy matrix), while insisting on
/// in_new >= 0 raises D at slow flows and adds up to 50 % more diffusion
/// than the channel's (docs/methods.md §4: 0.2 measured best; 0.15 left
/// the two-stage 80 km broad wave at S0 = 0.0002 1.2 % low, 0.3 let a
/// 20 km sharp wave peak 2.9 % high).
inline constexpr double kFlatInNewFloor = -0.2;

/// The smallest D whose coefficients have out_old >= 0 and in_new >= f at
/// Courant number C (f <= 0; from cungeCoefficients): in_new >= f where
/// D >= ((1 − C) + f(1 + C))/(1 − f) = (1 + f)/(1 − f) − C, so
///   D_min = max(C − 1, (1 + f)/(1 − f) − C)    (|1 − C| for f = 0).
/// `in_new_bound` is (1 + f)/(1 − f), formed once per reach.
inline double inNewBound(double in_new_floor) { return (1.0 + in_new_floor) / (1.0 - in_new_floor); }
inline double lowestCellDiffusion(double courant, double in_new_bound) {
  return courant - 1.0 > in_new_bound - courant ? courant - 1.0 : in_new_bound - courant;
}

/// Sub-reach count m (Δx = L/m) and sub-step count k (Δt_sub = Δt/k).
struct Grid {
  std::uint32_t subreaches = 1;
  std::uint32_t substeps = 1;
  bool x_clamped = false;    ///< reach shorter than ℓ − cΔt: D lowered to 1 + C
  bool compromise = false;   ///< no (m, k) met every bound; the closest was used
};

struct GridLimits {
  std::uint32_t max_subreaches = 1000;
  std::uint32_t max_substeps = 240;
};

/// Muskingum–Cunge grid, with ℓ = Q/(T S0 c) the diffusion length:
/// - where the wave moves at least ℓ in a step (cΔt >= ℓ), the coefficients
///   are non-negative exactly when |ℓ − cΔt_sub| <= Δx <= ℓ + cΔt_sub; the
///   fewest sub-steps for which such a Δx = L/m exists, and within that the
///   m that puts the Courant number closest to 1 (where the scheme is exact
///   for a pure translation);
/// - where it moves less (flat reaches), one sub-step and the Δx closest to
///   (3ℓ² + (cΔt)²)^(1/2), where the scheme's phase error vanishes (C² + 3D²
///   = 1, docs/methods.md §4), but no longer than the Δx at which the in_new
///   coefficient falls to `in_new_floor` (0: all coefficients non-negative;
///   the methods pass kFlatInNewFloor).
/// Preconditions as for cungeParameters (with L in place of Δx), and
/// −1 < in_new_floor <= 0.
Grid chooseCungeGrid(double length_m, double celerity_ms, double top_width_m, double bed_slope,
                     double q_ref_m3s, double dt_s, const GridLimits& limits = {},
                     double in_new_floor = 0);

/// Muskingum grid for given K and X: splits the reach into m sub-reaches of
/// K/m and the step into k sub-steps so that 2 (K/m) X <= Δt/k <= 2 (K/m)(1 − X)
/// (the no-negative-coefficient band; common practice, no source).
/// Preconditions as for muskingumCoefficients.
Grid chooseMuskingumGrid(double k_s, double x, double dt_s, const GridLimits& limits = {});

/// Ponce's convergence ratios (Ponce 1989, §9; Ponce & Theurer 1982):
/// amplitude R1 and phase R2 of the numerical against the analytical
/// diffusion wave, for Courant number C, weight X and σΔx = 2π Δx / L
/// (L the wavelength). Both are 1 for an exact scheme.
struct ConvergenceRatios {
  double amplitude = 0, phase = 0;
};
ConvergenceRatios ponceConvergenceRatios(double courant, double x, double sigma_dx);

}  // namespace reachwise::routing
