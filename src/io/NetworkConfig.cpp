#include "reachwise/io/NetworkConfig.hpp"

#include <toml++/toml.h>

#include <cmath>
#include <filesystem>

#include "RunFile.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::io {

namespace {

using detail::configError;
using detail::requireNumber;
using detail::requireString;

bool isKnownField(std::string_view name) {
  for (auto f : kFieldNames)
    if (f == name) return true;
  return false;
}

void parseFieldSpec(const toml::node& node, FieldSpec& spec, const std::string& origin,
                    const std::string& key) {
  if (node.is_string()) {
    spec.name = *node.value<std::string>();
    return;
  }
  const auto* table = node.as_table();
  if (!table) throw configError(origin, key, "expected a field name or a table {name, default}");
  for (const auto& [k, v] : *table) {
    const std::string sub = key + "." + std::string(k.str());
    if (k.str() == "name") {
      spec.name = requireString(v, origin, sub);
    } else if (k.str() == "default") {
      if (v.is_string())
        spec.default_text = *v.value<std::string>();
      else
        spec.default_number = requireNumber(v, origin, sub);
    } else {
      throw configError(origin, sub, "unknown key (expected name or default)");
    }
  }
  if (spec.name.empty()) throw configError(origin, key, "field name must not be empty");
}

void parseFields(const toml::table& fields, NetworkConfig& cfg) {
  for (const auto& [k, v] : fields) {
    const std::string name(k.str());
    const std::string key = "network.fields." + name;
    if (!isKnownField(name))
      throw configError(cfg.origin, key, "unknown attribute (see docs/formats.md)");
    parseFieldSpec(v, cfg.fields[name], cfg.origin, key);
  }
}

bool isKnownLakeField(std::string_view name) {
  for (auto f : kLakeFieldNames)
    if (f == name) return true;
  return false;
}

/// `[network.lake_fields]`: like `[network.fields]`, with the default's type
/// checked against the attribute (text for lake_id, outflow_table and
/// storage_table, a number for the others) and no default for lake_id.
void parseLakeFields(const toml::table& fields, NetworkConfig& cfg) {
  for (const auto& [k, v] : fields) {
    const std::string name(k.str());
    const std::string key = "network.lake_fields." + name;
    if (!isKnownLakeField(name))
      throw configError(cfg.origin, key,
                        "unknown lake attribute (expected lake_id, crest_level_m, weir_length_m, "
                        "weir_coefficient, outflow_table, storage_table, k_h, initial_level_m or "
                        "bottom_level_m)");
    FieldSpec& spec = cfg.lake_fields[name];
    parseFieldSpec(v, spec, cfg.origin, key);
    const std::string dkey = key + ".default";
    if (name == "lake_id" && spec.hasDefault())
      throw configError(cfg.origin, dkey, "a lake id cannot have a default (every lake needs its own)");
    if (isTextLakeField(name)) {
      if (spec.default_number) throw configError(cfg.origin, dkey, "expected a file name (text)");
      if (spec.default_text) {
        if (spec.default_text->empty()) throw configError(cfg.origin, dkey, "must not be empty");
        // A table file named in the run file is taken from the run file's folder.
        const std::filesystem::path p(*spec.default_text);
        const std::filesystem::path base = std::filesystem::path(cfg.origin).parent_path();
        if (p.is_relative() && !base.empty()) spec.default_text = (base / p).string();
      }
    } else if (spec.default_text) {
      throw configError(cfg.origin, dkey, "expected a number");
    }
  }
}

units::System parseUnits(const std::string& s, const std::string& origin, const std::string& key) {
  if (s == "si") return units::System::SI;
  if (s == "us") return units::System::USCustomary;
  throw configError(origin, key, "expected \"si\" or \"us\", got \"" + s + "\"");
}

TopologySource parseTopology(const std::string& s, const std::string& origin) {
  if (s == "auto") return TopologySource::Auto;
  if (s == "ids") return TopologySource::Ids;
  if (s == "geometry") return TopologySource::Geometry;
  throw configError(origin, "network.topology",
                    "expected \"auto\", \"ids\" or \"geometry\", got \"" + s + "\"");
}

Orientation parseOrientation(const std::string& s, const std::string& origin) {
  if (s == "auto") return Orientation::Auto;
  if (s == "digitised") return Orientation::Digitised;
  if (s == "elevation") return Orientation::Elevation;
  if (s == "outlets") return Orientation::Outlets;
  throw configError(origin, "network.orientation",
                    "expected \"auto\", \"digitised\", \"elevation\" or \"outlets\", got \"" + s +
                        "\"");
}

/// A reach id written as text or as an integer.
std::string requireReachId(const toml::node& v, const std::string& o, const std::string& key) {
  if (auto s = v.value<std::string>()) return *s;
  if (auto i = v.value<std::int64_t>()) return std::to_string(*i);
  throw configError(o, key, "expected a reach id (text or integer)");
}

std::vector<std::string> requireReachIds(const toml::node& v, const std::string& o,
                                         const std::string& key) {
  const auto* arr = v.as_array();
  if (!arr) throw configError(o, key, "expected an array of reach ids");
  std::vector<std::string> ids;
  for (const auto& item : *arr) ids.push_back(requireReachId(item, o, key));
  return ids;
}

/// `[[network.connect]]`: { from = "<reach>", to = "<reach>" | [x, y] }.
std::vector<network::geos::Connection> parseConnections(const toml::node& v, const std::string& o,
                                                        const std::string& key) {
  const auto* arr = v.as_array();
  if (!arr) throw configError(o, key, "expected [[network.connect]] tables");
  std::vector<network::geos::Connection> out;
  for (std::size_t k = 0; k < arr->size(); ++k) {
    const std::string at = key + "[" + std::to_string(k + 1) + "]";
    const auto* t = (*arr)[k].as_table();
    if (!t) throw configError(o, at, "expected a table { from = ..., to = ... }");
    network::geos::Connection c;
    bool has_to = false;
    for (const auto& [tk, tv] : *t) {
      const std::string sub = at + "." + std::string(tk.str());
      if (tk.str() == "from") {
        c.from = requireReachId(tv, o, sub);
      } else if (tk.str() == "to") {
        has_to = true;
        if (const auto* xy = tv.as_array()) {
          if (xy->size() != 2) throw configError(o, sub, "expected a reach id or a point [x, y]");
          network::Point3 p;
          p.x = requireNumber((*xy)[0], o, sub);
          p.y = requireNumber((*xy)[1], o, sub);
          if (!std::isfinite(p.x) || !std::isfinite(p.y))
            throw configError(o, sub, "the point's coordinates must be finite");
          c.to_point = p;
        } else {
          c.to_reach = requireReachId(tv, o, sub);
        }
      } else {
        throw configError(o, sub, "unknown key (expected from or to)");
      }
    }
    if (c.from.empty()) throw configError(o, at + ".from", "is required");
    if (!has_to) throw configError(o, at + ".to", "is required (a reach id or a point [x, y])");
    if (c.to_reach == c.from)
      throw configError(o, at + ".to", "reach " + c.from + " cannot be joined to itself");
    out.push_back(std::move(c));
  }
  return out;
}

network::DefaultSplit parseDefaultSplit(const std::string& s, const std::string& origin) {
  for (const auto rule : {network::DefaultSplit::Width, network::DefaultSplit::Equal, network::DefaultSplit::None})
    if (s == network::defaultSplitName(rule)) return rule;
  throw configError(origin, "network.default_split",
                    "expected \"width\", \"equal\" or \"none\", got \"" + s + "\"");
}

/// `[[network.split]]`: one table per bifurcation, `at` and `shares`. Only
/// the shape is checked here; the values are checked against the network
/// (network::resolveSplits).
std::vector<network::SplitOverride> parseSplitOverrides(const toml::node& node, const std::string& o) {
  const auto* arr = node.as_array();
  if (!arr)
    throw configError(o, "network.split",
                      "expected [[network.split]] tables, each with at = \"<reach id>\" and shares = { ... }");
  std::vector<network::SplitOverride> out;
  for (std::size_t i = 0; i < arr->size(); ++i) {
    network::SplitOverride split;
    split.key = "network.split[" + std::to_string(i + 1) + "]";
    const auto* table = (*arr)[i].as_table();
    if (!table) throw configError(o, split.key, "expected a table with at and shares");
    bool has_at = false, has_shares = false;
    for (const auto& [k, v] : *table) {
      const std::string key = split.key + "." + std::string(k.str());
      if (k.str() == "at") {
        split.at = requireReachId(v, o, key);
        has_at = true;
      } else if (k.str() == "shares") {
        const auto* shares = v.as_table();
        if (!shares) throw configError(o, key, "expected a table of reach id = share");
        for (const auto& [id, share] : *shares)
          split.shares.emplace_back(std::string(id.str()),
                                    requireNumber(share, o, key + "." + std::string(id.str())));
        has_shares = true;
      } else {
        throw configError(o, key, "unknown key (expected at or shares)");
      }
    }
    if (!has_at) throw configError(o, split.key + ".at", "missing: the reach flowing into the bifurcation");
    if (!has_shares) throw configError(o, split.key + ".shares", "missing: the share of each outgoing reach");
    out.push_back(std::move(split));
  }
  return out;
}

void parseNetworkTable(const toml::table& net, NetworkConfig& cfg) {
  const std::string& o = cfg.origin;
  for (const auto& [k, v] : net) {
    const std::string key = "network." + std::string(k.str());
    const std::string_view name = k.str();
    if (name == "layer") {
      cfg.layer = requireString(v, o, key);
    } else if (name == "lakes") {
      cfg.lakes = requireString(v, o, key);
      if (cfg.lakes.empty()) throw configError(o, key, "must not be empty");
      // A plain relative path is taken from the run file's folder.
      const std::filesystem::path p(cfg.lakes);
      if (p.is_relative() && cfg.lakes.find(':') == std::string::npos && !o.empty() &&
          std::filesystem::path(o).has_parent_path())
        cfg.lakes = (std::filesystem::path(o).parent_path() / p).string();
    } else if (name == "lakes_layer") {
      cfg.lakes_layer = requireString(v, o, key);
    } else if (name == "units") {
      cfg.units = parseUnits(requireString(v, o, key), o, key);
    } else if (name == "forcing_units") {
      cfg.forcing_units = parseUnits(requireString(v, o, key), o, key);
    } else if (name == "length_unit") {
      cfg.length_unit_m = v.is_string() ? metresPerUnit(*v.value<std::string>(), o)
                                        : requireNumber(v, o, key);
      if (!(*cfg.length_unit_m > 0)) throw configError(o, key, "must be positive");
    } else if (name == "topology") {
      cfg.topology = parseTopology(requireString(v, o, key), o);
    } else if (name == "snap_tolerance") {
      throw configError(o, key,
                        "was replaced by network.snap_tolerance_m, a distance in metres on any "
                        "CRS (the old key was in CRS units)");
    } else if (name == "snap_tolerance_m") {
      cfg.snap_tolerance_m = requireNumber(v, o, key);
      if (!(cfg.snap_tolerance_m >= 0) || !std::isfinite(cfg.snap_tolerance_m))
        throw configError(o, key, "must be zero or positive (metres)");
    } else if (name == "gap_search_m") {
      cfg.gap_search_m = requireNumber(v, o, key);
      if (!(*cfg.gap_search_m >= 0) || !std::isfinite(*cfg.gap_search_m))
        throw configError(o, key, "must be zero or positive (metres)");
    } else if (name == "orientation") {
      cfg.orientation = parseOrientation(requireString(v, o, key), o);
    } else if (name == "outlets") {
      cfg.outlets = requireReachIds(v, o, key);
    } else if (name == "unresolved_gaps") {
      const std::string s = requireString(v, o, key);
      if (s != "error" && s != "warn")
        throw configError(o, key, "expected \"error\" or \"warn\", got \"" + s + "\"");
      cfg.gaps_are_errors = s == "error";
    } else if (name == "unconnected") {
      cfg.unconnected = requireReachIds(v, o, key);
    } else if (name == "dem") {
      const std::filesystem::path dem = requireString(v, o, key);
      if (dem.empty()) throw configError(o, key, "path must not be empty");
      const std::filesystem::path base = std::filesystem::path(o).parent_path();
      cfg.dem = (dem.is_relative() && !base.empty() ? base / dem : dem).string();
    } else if (name == "connect") {
      cfg.connections = parseConnections(v, o, key);
    } else if (name == "default_split") {
      cfg.splits.fallback = parseDefaultSplit(requireString(v, o, key), o);
    } else if (name == "split") {
      cfg.splits.overrides = parseSplitOverrides(v, o);
    } else if (name == "fields") {
      const auto* fields = v.as_table();
      if (!fields) throw configError(o, key, "expected a table");
      parseFields(*fields, cfg);
    } else if (name == "lake_fields") {
      const auto* fields = v.as_table();
      if (!fields) throw configError(o, key, "expected a table");
      parseLakeFields(*fields, cfg);
    } else {
      throw configError(o, key, "unknown key (see docs/formats.md)");
    }
  }
  if (!cfg.outlets.empty() && (cfg.orientation == Orientation::Digitised ||
                               cfg.orientation == Orientation::Elevation))
    throw configError(o, "network.outlets",
                      "named outlets orient the lines; they need orientation \"outlets\" or "
                      "\"auto\"");
}

}  // namespace

NetworkConfig::NetworkConfig() {
  for (auto name : kFieldNames) fields[std::string(name)].name = std::string(name);
  for (auto name : kLakeFieldNames) lake_fields[std::string(name)].name = std::string(name);
}

const FieldSpec& NetworkConfig::field(std::string_view canonical) const {
  auto it = fields.find(canonical);
  REACHWISE_ASSERT(it != fields.end());
  return it->second;
}

const FieldSpec& NetworkConfig::lakeField(std::string_view canonical) const {
  auto it = lake_fields.find(canonical);
  REACHWISE_ASSERT(it != lake_fields.end());
  return it->second;
}

bool isTextLakeField(std::string_view canonical) {
  return canonical == "lake_id" || canonical == "outflow_table" || canonical == "storage_table";
}

double metresPerUnit(const std::string& name, const std::string& origin) {
  if (name == "m" || name == "metre" || name == "meter") return 1.0;
  if (name == "km") return 1000.0;
  if (name == "ft") return units::kMetresPerFoot;
  if (name == "us_ft") return 1200.0 / 3937.0;  // US survey foot, by its definition
  throw configError(origin, "network.length_unit",
                    "unknown unit \"" + name + "\" (expected m, km, ft, us_ft or a number)");
}

NetworkConfig NetworkConfig::fromString(const std::string& text, const std::string& origin) {
  NetworkConfig cfg;
  cfg.origin = origin;
  cfg.splits.origin = origin;
  const toml::table root = detail::parseRunFile(text, origin);
  if (const auto* net = root["network"].as_table()) {
    parseNetworkTable(*net, cfg);
  } else if (root.contains("network")) {
    throw configError(origin, "network", "expected a table");
  }
  return cfg;
}

NetworkConfig NetworkConfig::fromFile(const std::string& path) {
  return fromString(detail::readRunFile(path), path);
}

}  // namespace reachwise::io
