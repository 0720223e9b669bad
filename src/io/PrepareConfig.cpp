#include "reachwise/io/PrepareConfig.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>

#include "RunFile.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::io {

namespace {

using detail::configError;
using detail::requireNumber;
using detail::requireString;

namespace fs = std::filesystem;

double requirePositive(const toml::node& node, const std::string& origin, const std::string& key) {
  const double d = requireNumber(node, origin, key);
  if (!(d > 0)) throw configError(origin, key, "must be positive");
  return d;
}

double requireNonNegative(const toml::node& node, const std::string& origin,
                          const std::string& key) {
  const double d = requireNumber(node, origin, key);
  if (!(d >= 0)) throw configError(origin, key, "must be zero or positive");
  return d;
}

std::uint16_t requireOrder(const toml::node& node, const std::string& origin,
                           const std::string& key) {
  const auto i = node.value_exact<std::int64_t>();
  if (!i || *i < 1 || *i > std::numeric_limits<std::uint16_t>::max())
    throw configError(origin, key, "expected a Strahler order (a whole number from 1)");
  return static_cast<std::uint16_t>(*i);
}

double areaFieldUnit(const std::string& s, const std::string& origin, const std::string& key) {
  if (s == "km2") return 1.0;
  if (s == "m2") return 1e-6;
  if (s == "ha") return 1e-2;
  if (s == "mi2") return 1609.344 * 1609.344 / 1e6;  // international mile, exact
  throw configError(origin, key, "expected \"km2\", \"m2\", \"ha\" or \"mi2\", got \"" + s + "\"");
}

terrain::RasterUnit rasterUnit(const std::string& s, const std::string& origin,
                               const std::string& key) {
  for (const auto u : {terrain::RasterUnit::Cells, terrain::RasterUnit::SquareMetres,
                       terrain::RasterUnit::SquareKilometres})
    if (s == terrain::rasterUnitName(u)) return u;
  throw configError(origin, key, "expected \"cells\", \"m2\" or \"km2\", got \"" + s + "\"");
}

/// `{ a = ..., b = ... }` of a power law w = a A^b.
terrain::PowerLaw parsePowerLaw(const toml::node& node, terrain::PowerLaw law,
                                const std::string& origin, const std::string& key) {
  const auto* table = node.as_table();
  if (!table) throw configError(origin, key, "expected a table { a = ..., b = ... }");
  for (const auto& [k, v] : *table) {
    const std::string sub = key + "." + std::string(k.str());
    if (k.str() == "a") law.a = requirePositive(v, origin, sub);
    else if (k.str() == "b") law.b = requireNumber(v, origin, sub);
    else throw configError(origin, sub, "unknown key (expected a or b)");
  }
  return law;
}

terrain::LengthRelation parseLengthRelation(const toml::node& node, const std::string& origin,
                                            const std::string& key) {
  const auto* table = node.as_table();
  if (!table) throw configError(origin, key, "expected a table { coefficient = ..., exponent = ... }");
  terrain::LengthRelation rel;
  for (const auto& [k, v] : *table) {
    const std::string sub = key + "." + std::string(k.str());
    if (k.str() == "coefficient") rel.coefficient = requirePositive(v, origin, sub);
    else if (k.str() == "exponent") rel.exponent = requirePositive(v, origin, sub);
    else throw configError(origin, sub, "unknown key (expected coefficient or exponent)");
  }
  return rel;
}

/// `[[prepare.class]]`: orders = [..] | min_order/max_order | value, and
/// side_slope and/or manning_n.
std::vector<terrain::ChannelClass> parseClasses(const toml::node& node, const std::string& origin) {
  const auto* arr = node.as_array();
  if (!arr) throw configError(origin, "prepare.class", "expected [[prepare.class]] tables");
  std::vector<terrain::ChannelClass> out;
  for (std::size_t i = 0; i < arr->size(); ++i) {
    terrain::ChannelClass c;
    c.key = "prepare.class[" + std::to_string(i + 1) + "]";
    const auto* table = (*arr)[i].as_table();
    if (!table) throw configError(origin, c.key, "expected a table");
    bool has_min = false, has_max = false;
    for (const auto& [k, v] : *table) {
      const std::string sub = c.key + "." + std::string(k.str());
      const std::string_view name = k.str();
      if (name == "orders") {
        const auto* list = v.as_array();
        if (!list || list->empty()) throw configError(origin, sub, "expected a list of Strahler orders, e.g. [1, 2]");
        for (const auto& item : *list) c.orders.push_back(requireOrder(item, origin, sub));
      } else if (name == "min_order") {
        c.min_order = requireOrder(v, origin, sub);
        has_min = true;
      } else if (name == "max_order") {
        c.max_order = requireOrder(v, origin, sub);
        has_max = true;
      } else if (name == "value") {
        if (auto s = v.value<std::string>()) c.value = *s;
        else if (auto n = v.value_exact<std::int64_t>()) c.value = std::to_string(*n);
        else throw configError(origin, sub, "expected the class field's value (text or integer)");
      } else if (name == "side_slope") {
        c.side_slope = requireNonNegative(v, origin, sub);
      } else if (name == "manning_n") {
        c.manning_n = requirePositive(v, origin, sub);
      } else {
        throw configError(origin, sub,
                          "unknown key (expected orders, min_order, max_order, value, side_slope "
                          "or manning_n)");
      }
    }
    const bool by_order = !c.orders.empty() || has_min || has_max;
    if (by_order && c.value)
      throw configError(origin, c.key, "keys on both Strahler order and value: give one");
    if (!by_order && !c.value)
      throw configError(origin, c.key,
                        "applies to no reach: give orders, min_order/max_order or value");
    if (!c.orders.empty() && (has_min || has_max))
      throw configError(origin, c.key, "give either orders or min_order/max_order, not both");
    if (c.orders.empty() && !c.value) {
      if (!has_min) c.min_order = 1;
      if (!has_max) c.max_order = std::numeric_limits<std::uint16_t>::max();
      if (c.min_order > c.max_order)
        throw configError(origin, c.key + ".max_order", "is below min_order");
    }
    if (!c.side_slope && !c.manning_n)
      throw configError(origin, c.key, "sets nothing: give side_slope and/or manning_n");
    out.push_back(std::move(c));
  }
  return out;
}

/// `replace`: the DEM attributes go to cfg.replace, the channel ones to
/// cfg.geometry.replace.
void parseReplace(const toml::node& node, PrepareConfig& cfg, const std::string& key) {
  const std::string& origin = cfg.origin;
  const auto* arr = node.as_array();
  if (!arr) throw configError(origin, key, "expected a list of attribute names");
  for (const auto& item : *arr) {
    const std::string name = requireString(item, origin, key);
    if (name == "slope" || name == "elevations") {
      cfg.replace.push_back(name);
    } else if (const auto a = terrain::attributeNamed(name)) {
      cfg.geometry.replace.push_back(*a);
    } else {
      throw configError(origin, key,
                        "unknown attribute \"" + name +
                            "\" (expected slope, elevations, bottom_width, bank_depth, side_slope or "
                            "manning_n)");
    }
  }
}

/// One key after another of `[prepare]`: an `else if` per key.
void parsePrepareTable(const toml::table& prepare, PrepareConfig& cfg) {
  const std::string& o = cfg.origin;
  const fs::path base = fs::path(o).parent_path();
  std::optional<terrain::RasterUnit> raster_unit;
  std::optional<double> search_m;
  bool has_class_value = false;
  bool has_field_unit = false;
  for (const auto& [k, v] : prepare) {
    const std::string key = "prepare." + std::string(k.str());
    const std::string_view name = k.str();
    if (name == "area_field") {
      cfg.area_field = requireString(v, o, key);
      if (cfg.area_field.empty()) throw configError(o, key, "field name must not be empty");
    } else if (name == "area_field_unit") {
      cfg.area_field_km2_per_unit = areaFieldUnit(requireString(v, o, key), o, key);
      has_field_unit = true;
    } else if (name == "area_raster") {
      const fs::path p = requireString(v, o, key);
      if (p.empty()) throw configError(o, key, "path must not be empty");
      cfg.area_raster.emplace();
      cfg.area_raster->path = (p.is_relative() && !base.empty() ? base / p : p).string();
      cfg.area_raster->key = key;
    } else if (name == "area_raster_unit") {
      raster_unit = rasterUnit(requireString(v, o, key), o, key);
    } else if (name == "area_search_m") {
      search_m = requireNonNegative(v, o, key);
    } else if (name == "length_relation") {
      cfg.length_relation = parseLengthRelation(v, o, key);
    } else if (name == "width") {
      cfg.geometry.width = parsePowerLaw(v, terrain::kDefaultWidth, o, key);
    } else if (name == "depth") {
      if (auto on = v.value_exact<bool>())
        cfg.geometry.depth = *on ? std::optional(terrain::kDefaultDepth) : std::nullopt;
      else
        cfg.geometry.depth = parsePowerLaw(v, terrain::kDefaultDepth, o, key);
    } else if (name == "side_slope") {
      cfg.geometry.default_side_slope = requireNonNegative(v, o, key);
    } else if (name == "manning_n") {
      cfg.geometry.default_manning_n = requirePositive(v, o, key);
    } else if (name == "class_field") {
      cfg.class_field = requireString(v, o, key);
      if (cfg.class_field.empty()) throw configError(o, key, "field name must not be empty");
    } else if (name == "class") {
      cfg.geometry.classes = parseClasses(v, o);
      for (const auto& c : cfg.geometry.classes) has_class_value = has_class_value || c.value;
    } else if (name == "replace") {
      parseReplace(v, cfg, key);
    } else if (name == "min_slope") {
      cfg.min_slope = requirePositive(v, o, key);
      if (!(cfg.min_slope < 1)) throw configError(o, key, "must be > 0 and < 1");
    } else if (name == "rise_threshold_m") {
      cfg.rise_threshold_m = requireNonNegative(v, o, key);
    } else if (name == "sample_spacing_m") {
      cfg.sample_spacing_m = requireNonNegative(v, o, key);
    } else {
      throw configError(o, key, "unknown key (see docs/formats.md)");
    }
  }
  if (cfg.area_raster) {
    if (raster_unit) cfg.area_raster->unit = *raster_unit;
    cfg.area_raster->search_m = search_m;
  } else if (raster_unit) {
    throw configError(o, "prepare.area_raster_unit", "is given without prepare.area_raster");
  } else if (search_m) {
    throw configError(o, "prepare.area_search_m", "is given without prepare.area_raster");
  }
  if (has_field_unit && cfg.area_field.empty())
    throw configError(o, "prepare.area_field_unit", "is given without prepare.area_field");
  if (has_class_value && cfg.class_field.empty())
    throw configError(o, "prepare.class_field",
                      "is required when a [[prepare.class]] table is keyed on a value");
}

}  // namespace

bool PrepareConfig::replaces(const std::string& attribute) const {
  return std::find(replace.begin(), replace.end(), attribute) != replace.end();
}

PrepareConfig PrepareConfig::fromString(const std::string& text, const std::string& origin) {
  PrepareConfig cfg;
  cfg.origin = origin;
  const toml::table root = detail::parseRunFile(text, origin);
  if (const auto* prepare = root["prepare"].as_table()) {
    parsePrepareTable(*prepare, cfg);
  } else if (root.contains("prepare")) {
    throw configError(origin, "prepare", "expected a table");
  }
  return cfg;
}

PrepareConfig PrepareConfig::fromFile(const std::string& path) {
  return fromString(detail::readRunFile(path), path);
}

terrain::AreaOptions PrepareConfig::areaOptions(std::vector<double> field_values) const {
  terrain::AreaOptions options;
  for (double& v : field_values) v *= area_field_km2_per_unit;
  options.field_km2 = std::move(field_values);
  options.field_name = area_field;
  options.raster = area_raster;
  options.length_relation = length_relation;
  return options;
}

}  // namespace reachwise::io
