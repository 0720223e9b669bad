#include "reachwise/terrain/HydraulicGeometry.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "reachwise/Error.hpp"
#include "reachwise/network/Strahler.hpp"

namespace reachwise::terrain {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct AttributeRow {
  Attribute attribute;
  std::string_view name;
};
constexpr AttributeRow kAttributes[] = {
    {Attribute::BottomWidth, "bottom_width"},
    {Attribute::BankDepth, "bank_depth"},
    {Attribute::SideSlope, "side_slope"},
    {Attribute::ManningN, "manning_n"},
};

bool replaced(const HydraulicGeometryOptions& o, Attribute a) {
  return std::find(o.replace.begin(), o.replace.end(), a) != o.replace.end();
}

/// The first class matching the reach that sets the attribute (`pick`
/// returns its optional value).
template <class Pick>
std::optional<double> fromClasses(const HydraulicGeometryOptions& o, std::uint16_t order,
                                  const std::string* class_value, Pick pick) {
  for (const auto& c : o.classes)
    if (c.matches(order, class_value))
      if (const std::optional<double> value = pick(c)) return value;
  return std::nullopt;
}

}  // namespace

double PowerLaw::at(double area_km2) const {
  if (!(area_km2 >= 0) || !std::isfinite(area_km2)) return kNaN;
  return a * std::pow(area_km2, b);
}

bool ChannelClass::matches(std::uint16_t order, const std::string* class_value) const {
  if (value) return class_value && *class_value == *value;
  if (!orders.empty()) return std::find(orders.begin(), orders.end(), order) != orders.end();
  return order >= min_order && order <= max_order;
}

std::string_view attributeName(Attribute attribute) noexcept {
  for (const auto& row : kAttributes)
    if (row.attribute == attribute) return row.name;
  return "?";
}

std::optional<Attribute> attributeNamed(std::string_view name) noexcept {
  for (const auto& row : kAttributes)
    if (row.name == name) return row.attribute;
  return std::nullopt;
}

std::string_view attributeSourceName(AttributeSource source) noexcept {
  switch (source) {
    case AttributeSource::Field: return "field";
    case AttributeSource::HydraulicGeometry: return "hydraulic_geometry";
    case AttributeSource::ClassTable: return "class_table";
    case AttributeSource::Default: return "default";
    case AttributeSource::None: return "none";
  }
  return "none";
}

double bottomWidthFromBankfull(double width_m, double side_slope, double depth_m) {
  if (!std::isfinite(width_m)) return kNaN;
  if (!std::isfinite(depth_m) || !std::isfinite(side_slope)) return width_m;
  return std::max(width_m - 2.0 * side_slope * depth_m, width_m / 2.0);
}

std::vector<DerivedSection> hydraulicGeometry(const network::ReachGraph& graph,
                                              const std::vector<AreaValue>& areas,
                                              const HydraulicGeometryOptions& options) {
  const std::size_t n = graph.size();
  if (areas.size() != n)
    throw InvalidParameter("areas", fmt::format("expected {} values (one per reach), got {}", n,
                                                areas.size()));
  if (!options.class_values.empty() && options.class_values.size() != n)
    throw InvalidParameter("class_values", fmt::format("expected {} values (one per reach), got {}",
                                                       n, options.class_values.size()));
  const auto order = graph.topologicalOrder();
  if (!order) {
    InputLocation where;
    where.file = graph.table().source;
    where.layer = graph.table().layer;
    throw InputError(where, "the network has a cycle: Strahler orders cannot be found "
                            "(run `reachwise check` for the reaches involved)");
  }
  const std::vector<std::uint16_t> strahler = network::strahlerOrder(graph, *order);

  std::vector<DerivedSection> out(n);
  for (network::ReachGraph::Vertex v = 0; v < n; ++v) {
    DerivedSection& d = out[v];
    hydraulics::SectionSpec& s = d.section;
    s = graph.record(v).section;
    d.strahler_order = strahler[v];
    d.area_km2 = areas[v].km2;
    d.bankfull_width_m = options.width.at(d.area_km2);
    d.bankfull_depth_m = options.depth ? options.depth->at(d.area_km2) : kNaN;
    const std::string* class_value =
        options.class_values.empty() || !options.class_values[v] ? nullptr : &*options.class_values[v];

    // Manning's n: every shape.
    if (std::isfinite(s.manning_n) && !replaced(options, Attribute::ManningN)) {
      d.manning_n = AttributeSource::Field;
    } else if (auto cn = fromClasses(options, d.strahler_order, class_value,
                                     [](const ChannelClass& c) { return c.manning_n; })) {
      s.manning_n = *cn;
      d.manning_n = AttributeSource::ClassTable;
    } else {
      s.manning_n = options.default_manning_n;
      d.manning_n = AttributeSource::Default;
    }
    if (s.shape == hydraulics::Shape::Circle) continue;  // a pipe keeps its geometry

    // Side slope: 0 is what the reader stores when none is given.
    if (s.side_slope > 0 && std::isfinite(s.side_slope) && !replaced(options, Attribute::SideSlope)) {
      d.side_slope = AttributeSource::Field;
    } else if (auto cz = fromClasses(options, d.strahler_order, class_value,
                                     [](const ChannelClass& c) { return c.side_slope; })) {
      s.side_slope = *cz;
      d.side_slope = AttributeSource::ClassTable;
    } else {
      s.side_slope = options.default_side_slope;
      d.side_slope = AttributeSource::Default;
    }

    // Bank depth (two-stage main channel): the bankfull depth.
    double depth = d.bankfull_depth_m;
    if (s.shape == hydraulics::Shape::TwoStage) {
      if (std::isfinite(s.bank_depth_m) && !replaced(options, Attribute::BankDepth)) {
        d.bank_depth = AttributeSource::Field;
        depth = s.bank_depth_m;  // the channel's own depth sets its bottom width
      } else if (std::isfinite(d.bankfull_depth_m)) {
        s.bank_depth_m = d.bankfull_depth_m;
        d.bank_depth = AttributeSource::HydraulicGeometry;
      } else if (std::isfinite(s.bank_depth_m)) {
        d.bank_depth = AttributeSource::Field;  // to be replaced, but nothing to replace it with
        depth = s.bank_depth_m;
      }
    }

    // Bottom width from the bankfull width.
    if (std::isfinite(s.bottom_width_m) && !replaced(options, Attribute::BottomWidth)) {
      d.bottom_width = AttributeSource::Field;
    } else if (std::isfinite(d.bankfull_width_m)) {
      s.bottom_width_m = bottomWidthFromBankfull(d.bankfull_width_m, s.side_slope, depth);
      d.bottom_width = AttributeSource::HydraulicGeometry;
    } else if (std::isfinite(s.bottom_width_m)) {
      d.bottom_width = AttributeSource::Field;  // to be replaced, but no drainage area
    }
  }
  return out;
}

}  // namespace reachwise::terrain
