#pragma once
// Private to the network reader: mapping a feature's attributes onto a
// ReachRecord (field lookup, defaults, unit conversion). A value that is
// missing or cannot be read is a problem here; the ranges of the values read
// are checked by network::validate, as for a table built in memory.

#include <ogrsf_frmts.h>

#include <array>
#include <cstddef>
#include <iterator>
#include <string>
#include <string_view>

#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/network/ReachProblem.hpp"

namespace reachwise::io::detail {

/// A canonical attribute name (kFieldNames), resolved to its place in that
/// list when the program is compiled: reading a feature looks no field up
/// by name (a national layer has a million features of ~15 fields each).
/// A name not in the list does not compile.
class FieldKey {
public:
  consteval FieldKey(const char* canonical) : slot_(slotOf(canonical)) {}
  std::size_t slot() const noexcept { return slot_; }
  std::string_view name() const noexcept { return kFieldNames[slot_]; }

private:
  static consteval std::size_t slotOf(std::string_view canonical) {
    for (std::size_t i = 0; i < std::size(kFieldNames); ++i)
      if (kFieldNames[i] == canonical) return i;
    throw "not a canonical attribute name (kFieldNames)";
  }
  std::size_t slot_;
};

class ReachAttributes {
public:
  /// Looks the configured fields up in the layer. Throws InputError (with
  /// `where`'s file and layer) when a required field is absent and has no default.
  /// `derive_attributes`: see ReadOptions::derive_attributes. `config`
  /// must outlive the reader (its field entries are kept by address).
  ReachAttributes(const OGRFeatureDefn& defn, const NetworkConfig& config, InputLocation where,
                  bool derive_attributes = false);

  /// True when the layer has the field configured for `canonical`.
  bool hasField(FieldKey canonical) const { return fields_[canonical.slot()].index >= 0; }

  /// Fills id, to_reach and the numeric attributes of `r` (r.fid and
  /// r.line must be set; length_m needs r.geometry_length_m). Returns false
  /// when the feature has no usable id.
  bool read(const OGRFeature& f, network::ReachRecord& r, network::ProblemList& problems) const;

private:
  struct Value {
    enum class State { Ok, Missing, Invalid } state = State::Missing;
    double number = network::ReachRecord::kUnset;
    std::string text;
  };
  Value number(const OGRFeature& f, FieldKey canonical, double scale,
               const network::ReachRecord& r, network::ProblemList& problems) const;
  /// number(), but with derive_attributes a value from the config's
  /// default (no value in the layer) counts as missing.
  Value derivable(const OGRFeature& f, FieldKey canonical, double scale,
                  const network::ReachRecord& r, network::ProblemList& problems) const;
  Value text(const OGRFeature& f, FieldKey canonical) const;
  void readSection(const OGRFeature& f, network::ReachRecord& r,
                   network::ProblemList& problems) const;
  void readTwoStage(const OGRFeature& f, network::ReachRecord& r,
                    network::ProblemList& problems) const;
  void readSlope(const OGRFeature& f, network::ReachRecord& r,
                 network::ProblemList& problems) const;
  void readLength(const OGRFeature& f, network::ReachRecord& r,
                  network::ProblemList& problems) const;
  void readRouting(const OGRFeature& f, network::ReachRecord& r,
                   network::ProblemList& problems) const;

  /// A canonical attribute's field in the layer and its configuration.
  struct Field {
    int index = -1;                   ///< in the layer; -1: absent
    const FieldSpec* spec = nullptr;  ///< the configuration's (it outlives this reader)
  };
  const Field& field(FieldKey canonical) const { return fields_[canonical.slot()]; }

  std::array<Field, std::size(kFieldNames)> fields_;  ///< by FieldKey::slot
  double length_scale_ = 1.0;     ///< metres per unit of widths/depths/lengths
  double discharge_scale_ = 1.0;  ///< m^3/s per unit of discharge (base flow)
  bool derive_attributes_ = false;
};

}  // namespace reachwise::io::detail
