#include "reachwise/io/OutputUnits.hpp"

#include <array>
#include <utility>

namespace reachwise::io {

namespace {

bool us(units::System s) { return s == units::System::USCustomary; }

/// Unit suffixes of field names: SI, US customary.
constexpr std::array<std::pair<std::string_view, std::string_view>, 3> kSuffixes = {
    std::pair{"_m3s", "_cfs"}, std::pair{"_m3", "_ft3"}, std::pair{"_m", "_ft"}};

bool endsWith(std::string_view s, std::string_view tail) {
  return s.size() > tail.size() && s.substr(s.size() - tail.size()) == tail;
}

}  // namespace

std::string_view unitSystemName(units::System system) { return us(system) ? "us" : "si"; }

std::optional<units::System> unitSystemFromName(std::string_view name) {
  if (name == "si") return units::System::SI;
  if (name == "us") return units::System::USCustomary;
  return std::nullopt;
}

double toOutputUnits(units::System system, Quantity quantity, double v) {
  if (!us(system)) return v;
  switch (quantity) {
    case Quantity::None: return v;
    case Quantity::Discharge: return units::m3sToCfs(v);
    case Quantity::Volume: return v / units::kCubicMetresPerCubicFoot;
    case Quantity::Length:
    case Quantity::Velocity: return units::metresToFeet(v);
  }
  return v;
}

std::string_view unitSymbol(units::System system, Quantity quantity) {
  switch (quantity) {
    case Quantity::None: return "";
    case Quantity::Discharge: return us(system) ? "ft³/s" : "m³/s";
    case Quantity::Volume: return us(system) ? "ft³" : "m³";
    case Quantity::Length: return us(system) ? "ft" : "m";
    case Quantity::Velocity: return us(system) ? "ft/s" : "m/s";
  }
  return "";
}

std::string_view unitAscii(units::System system, Quantity quantity) {
  switch (quantity) {
    case Quantity::None: return "";
    case Quantity::Discharge: return us(system) ? "ft3/s" : "m3/s";
    case Quantity::Volume: return us(system) ? "ft3" : "m3";
    case Quantity::Length: return us(system) ? "ft" : "m";
    case Quantity::Velocity: return us(system) ? "ft/s" : "m/s";
  }
  return "";
}

std::string_view unitUdunits(units::System system, Quantity quantity) {
  switch (quantity) {
    case Quantity::None: return "1";
    case Quantity::Discharge: return us(system) ? "ft3 s-1" : "m3 s-1";
    case Quantity::Volume: return us(system) ? "ft3" : "m3";
    case Quantity::Length: return us(system) ? "ft" : "m";
    case Quantity::Velocity: return us(system) ? "ft s-1" : "m s-1";
  }
  return "1";
}

std::string fieldName(std::string_view si_name, units::System system) {
  if (us(system))
    for (const auto& [si, customary] : kSuffixes)
      if (endsWith(si_name, si)) return std::string(si_name.substr(0, si_name.size() - si.size())) + std::string(customary);
  return std::string(si_name);
}

std::string siFieldName(std::string_view name) {
  for (const auto& [si, customary] : kSuffixes)
    if (endsWith(name, customary)) return std::string(name.substr(0, name.size() - customary.size())) + std::string(si);
  return std::string(name);
}

}  // namespace reachwise::io
