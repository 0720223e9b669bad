#pragma once
/// \file
/// The unit system of a run's outputs (`route --units si|us`), applied at
/// the output edge only: routing stays SI, and every writer converts the
/// quantities that have a unit as it writes them (docs/formats.md, "Output
/// units"). Dimensionless values and times are the same in both systems.
///
/// A field name keeps one meaning: a name without a unit (`peak_q`, `q`,
/// `depth`) holds the quantity in the run's output units; a name that
/// carries its unit (`volume_in_m3`, `dx_m`, `inflow_peak_m3s`) is written
/// under the name of the unit it holds (`volume_in_ft3`, `dx_ft`,
/// `inflow_peak_cfs` in US customary units), so a suffix never lies.

#include <optional>
#include <string>
#include <string_view>

#include "reachwise/hydraulics/Units.hpp"

namespace reachwise::io {

/// What kind of quantity a value is, for its unit.
enum class Quantity { None, Discharge, Volume, Length, Velocity };

/// `si` or `us` (the names of the command line and run files).
std::string_view unitSystemName(units::System system);
/// The system of a name above; nothing for any other name.
std::optional<units::System> unitSystemFromName(std::string_view name);

/// An SI value of `quantity` in `system` (unchanged for SI and for
/// Quantity::None), converted with the exact foot (Units.hpp).
double toOutputUnits(units::System system, Quantity quantity, double value);

/// The unit of `quantity` for people: "m³/s", "ft³/s", "m", "ft", "m³",
/// "ft³", "m/s", "ft/s" (empty for Quantity::None).
std::string_view unitSymbol(units::System system, Quantity quantity);
/// The same in plain ASCII for the console: "m3/s", "ft3/s", ...
std::string_view unitAscii(units::System system, Quantity quantity);
/// The UDUNITS-2 text of CF `units` attributes: "m3 s-1", "ft3 s-1", "m",
/// "ft", "m3", "ft3", "m s-1", "ft s-1".
std::string_view unitUdunits(units::System system, Quantity quantity);

/// The name of a results field in `system`: an SI field name whose last
/// part names its unit (`_m3s`, `_m3`, `_m`) gets the US customary unit's
/// instead (`_cfs`, `_ft3`, `_ft`); other names are the same in both.
std::string fieldName(std::string_view si_name, units::System system);
/// The SI name of a field named by fieldName() (itself for an SI name).
std::string siFieldName(std::string_view name);

}  // namespace reachwise::io
