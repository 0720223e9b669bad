#pragma once
// Private to the network reader: mapping a feature's attributes onto a
// ReachRecord (field lookup, defaults, unit conversion). A value that is
// missing or cannot be read is a problem here; the ranges of the values read
// are checked by network::validate, as for a table built in memory.

#include <ogrsf_frmts.h>

#include <map>
#include <string>

#include "reachwise/Error.hpp"
#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachTable.hpp"
#include "reachwise/network/ReachProblem.hpp"

namespace reachwise::io::detail {

class ReachAttributes {
public:
  /// Looks the configured fields up in the layer. Throws InputError (with
  /// `where`'s file and layer) when a required field is absent and has no default.
  /// `derive_attributes`: see ReadOptions::derive_attributes.
  ReachAttributes(const OGRFeatureDefn& defn, const NetworkConfig& config, InputLocation where,
                  bool derive_attributes = false);

  /// True when the layer has the field configured for `canonical`.
  bool hasField(std::string_view canonical) const;

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
  Value number(const OGRFeature& f, std::string_view canonical, double scale,
               const network::ReachRecord& r, network::ProblemList& problems) const;
  /// number(), but with derive_attributes a value from the config's
  /// default (no value in the layer) counts as missing.
  Value derivable(const OGRFeature& f, std::string_view canonical, double scale,
                  const network::ReachRecord& r, network::ProblemList& problems) const;
  Value text(const OGRFeature& f, std::string_view canonical) const;
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

  const NetworkConfig& config_;
  std::map<std::string, int, std::less<>> index_;  ///< canonical name -> field index, -1 absent
  double length_scale_ = 1.0;                      ///< metres per unit of widths/depths/lengths
  double discharge_scale_ = 1.0;                   ///< m^3/s per unit of discharge (base flow)
  bool derive_attributes_ = false;
};

}  // namespace reachwise::io::detail
