#pragma once
// Small in-memory reach tables for the network tests.

#include <cmath>
#include <cstdint>
#include <optional>
#include <string>
#include <utility>

#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network::testing {

/// Builds a ReachTable record by record; fid = record index + 100 so that a
/// test can tell fids from indices.
class TableBuilder {
public:
  TableBuilder& reach(std::string id, std::optional<std::string> to,
                      Point3 from = {0, 0}, Point3 to_point = {1000, 0}, double split = ReachRecord::kUnset) {
    ReachRecord r;
    r.id = std::move(id);
    r.fid = static_cast<std::int64_t>(table_.reaches.size()) + 100;
    r.to_reach = std::move(to);
    r.line = {from, to_point};
    const double dx = to_point.x - from.x, dy = to_point.y - from.y;
    r.geometry_length_m = std::sqrt(dx * dx + dy * dy);
    r.split = split;
    r.section.bottom_width_m = 10;
    r.section.manning_n = 0.035;
    r.section.bed_slope = 0.001;
    table_.reaches.push_back(std::move(r));
    return *this;
  }
  /// A reach with a unit-length line at an arbitrary place.
  TableBuilder& link(std::string id, std::optional<std::string> to, double split = ReachRecord::kUnset) {
    return reach(std::move(id), std::move(to), {0, 0}, {1000, 0}, split);
  }
  ReachTable build() {
    table_.source = "memory.gpkg";
    table_.layer = "rivers";
    table_.has_to_reach = true;
    return table_;
  }

private:
  ReachTable table_;
};

}  // namespace reachwise::network::testing
