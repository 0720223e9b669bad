#pragma once
/// \file
/// The forcing of a routing run: a time axis and, per reach, the discharge
/// entering at its top (inflow) and along it (lateral), one value per axis
/// sample, in m^3/s.
///
/// `ForcingSource` is what the scheduler pulls from, reach by reach, so that
/// a large NetCDF forcing never has to be in memory at once; CSV forcing is
/// small and read whole into a `Forcing`, served by `MemoryForcingSource`.

#include <functional>
#include <limits>
#include <map>
#include <set>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

enum class ForcingKind { Inflow, Lateral };

/// "inflow" or "lateral" (also the NetCDF variable names).
std::string_view kindName(ForcingKind kind);

/// Largest discharge a forcing or observation value may have, m^3/s
/// (1e8): about ten times the largest floods known, the outbursts of
/// ice-age lakes (of the order of 1e7 m^3/s, from memory). A larger value
/// is a unit or typing error, refused where it is read (file, line or
/// reach and time) rather than failing later in a reach's hydraulics.
inline constexpr double kMaxDischarge_m3s = 1e8;

/// Smallest positive discharge read as itself, m^3/s (1e-9, a microlitre
/// a second): below it a value is read as 0 (no flow), so that a tiny or
/// subnormal number (4.9e-324) does not reach the hydraulics, whose tables
/// are built down to a fraction of the smallest inflow.
inline constexpr double kMinDischarge_m3s = 1e-9;

/// `q_m3s` with values below kMinDischarge_m3s read as 0; NaN when it is
/// not a discharge this program reads (negative, not finite, or above
/// kMaxDischarge_m3s), for the caller to refuse naming where it was read.
inline double readableDischarge(double q_m3s) {
  if (!(q_m3s >= 0) || !(q_m3s <= kMaxDischarge_m3s)) return std::numeric_limits<double>::quiet_NaN();
  return q_m3s < kMinDischarge_m3s ? 0.0 : q_m3s;
}

/// Why `q_m3s` is not readable (readableDischarge is NaN), for messages.
std::string dischargeProblem(double q_m3s);

/// Reach id → series on the axis, m^3/s. Ordered so that output and error
/// listings are deterministic; `std::less<>` allows lookup by string_view.
using SeriesMap = std::map<std::string, std::vector<double>, std::less<>>;

struct Forcing {
  routing::TimeAxis axis;
  SeriesMap inflow;                   ///< discharge at the top of the reach, m^3/s
  SeriesMap lateral;                  ///< discharge along the reach, m^3/s
  std::string inflow_origin;          ///< file it came from (for messages), may be empty
  std::string lateral_origin;
  /// Things the reader did that a user should hear about (a series held
  /// at its first or last value outside its own data, ...), one line each.
  std::vector<std::string> warnings;

  SeriesMap& series(ForcingKind kind) { return kind == ForcingKind::Inflow ? inflow : lateral; }
  const SeriesMap& series(ForcingKind kind) const {
    return kind == ForcingKind::Inflow ? inflow : lateral;
  }
  std::string& origin(ForcingKind kind) {
    return kind == ForcingKind::Inflow ? inflow_origin : lateral_origin;
  }
  const std::string& origin(ForcingKind kind) const {
    return kind == ForcingKind::Inflow ? inflow_origin : lateral_origin;
  }
};

/// Per-reach access to forcing, whatever holds it.
///
/// Contract: every series has exactly `axis().steps` values, finite and
/// >= 0, in m^3/s. A reach without a series of a kind gets zero from the
/// caller (docs/formats.md, "Forcing input": a reach not named gets zero). Implementations
/// are safe to call from several threads at once.
class ForcingSource {
public:
  virtual ~ForcingSource() = default;

  virtual const routing::TimeAxis& axis() const = 0;

  /// Writes the series of `kind` for reach `id` into `out` (exactly
  /// axis().steps values) and returns true; returns false when the source
  /// has none, with `out` then all zero. Throws InputError when stored data
  /// are bad. The one virtual read: the router's buffers are filled in place.
  virtual bool fill(ForcingKind kind, std::string_view id, std::span<double> out) const = 0;

  /// Like fill(), into a vector resized to axis().steps; `out` is left
  /// untouched when the source has none.
  bool series(ForcingKind kind, std::string_view id, std::vector<double>& out) const;

  /// Reach ids that have a series of `kind`, sorted.
  virtual std::vector<std::string> ids(ForcingKind kind) const = 0;

  /// Calls `visit` with every reach id that has a series of `kind`, in no
  /// particular order and without copying them where the source can: for
  /// checks that need no order (ids() copies and sorts every id, a million
  /// of them on a national network).
  virtual void visitIds(ForcingKind kind, const std::function<void(std::string_view)>& visit) const {
    for (const std::string& id : ids(kind)) visit(id);
  }

  /// File (or other name) the series of `kind` came from, for messages.
  virtual std::string origin(ForcingKind kind) const = 0;

  /// Whether series of `kind` are read from a file as they are asked for
  /// (rather than held in memory): the router then reads them ahead.
  virtual bool readsOnDemand(ForcingKind /*kind*/) const { return false; }

  bool inflow(std::string_view id, std::vector<double>& out) const {
    return series(ForcingKind::Inflow, id, out);
  }
  bool lateral(std::string_view id, std::vector<double>& out) const {
    return series(ForcingKind::Lateral, id, out);
  }
  /// Every reach id with any series, sorted, without repeats. (Derived
  /// classes bring it back into scope with `using ForcingSource::ids;`.)
  std::vector<std::string> ids() const;
};

/// Serves a `Forcing` held in memory. Checks the contract on construction
/// (throws InvalidParameter naming the reach when a series has the wrong
/// length or a bad value).
class MemoryForcingSource final : public ForcingSource {
public:
  explicit MemoryForcingSource(Forcing forcing);

  const routing::TimeAxis& axis() const override { return forcing_.axis; }
  bool fill(ForcingKind kind, std::string_view id, std::span<double> out) const override;
  std::vector<std::string> ids(ForcingKind kind) const override;
  using ForcingSource::ids;
  std::string origin(ForcingKind kind) const override { return forcing_.origin(kind); }

  const Forcing& forcing() const noexcept { return forcing_; }

private:
  Forcing forcing_;
};

/// Throws one InputError listing every reach id of `source` (both kinds)
/// for which `known` is false, grouped by file, so that a user fixes them
/// all in one go; `hint`, when given, may explain an unknown id (its
/// sentences, without repeats, follow the list). Does nothing when all
/// are known.
void requireKnownReaches(const ForcingSource& source,
                         const std::function<bool(std::string_view)>& known,
                         const std::function<std::string(std::string_view)>& hint = {});

/// Convenience overload for a set of network reach ids.
void requireKnownReaches(const ForcingSource& source, const std::set<std::string, std::less<>>& known);

}  // namespace reachwise::io
