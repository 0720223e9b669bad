#pragma once
/// \file
/// US customary <-> SI conversion at the edges. Everything inside reachwise
/// is SI (m, s, m^3/s).

namespace reachwise::units {

inline constexpr double kMetresPerFoot = 0.3048;                 // exact, by definition
inline constexpr double kCubicMetresPerCubicFoot = 0.3048 * 0.3048 * 0.3048;
/// Manning's constant for US customary units: 1.486 ≈ (1 m / 1 ft)^(1/3)
/// (Chow 1959). Only needed when a formula is evaluated in ft directly.
inline constexpr double kManningUsCustomary = 1.486;

constexpr double feetToMetres(double ft) { return ft * kMetresPerFoot; }
constexpr double metresToFeet(double m) { return m / kMetresPerFoot; }
constexpr double cfsToM3s(double cfs) { return cfs * kCubicMetresPerCubicFoot; }
constexpr double m3sToCfs(double m3s) { return m3s / kCubicMetresPerCubicFoot; }
constexpr double squareFeetToSquareMetres(double ft2) { return ft2 * kMetresPerFoot * kMetresPerFoot; }
constexpr double squareMetresToSquareFeet(double m2) { return m2 / (kMetresPerFoot * kMetresPerFoot); }

/// Unit system of user input or output.
enum class System { SI, USCustomary };

}  // namespace reachwise::units
