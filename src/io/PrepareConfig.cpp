#include "reachwise/io/PrepareConfig.hpp"

#include <toml++/toml.h>

#include <algorithm>

#include "RunFile.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::io {

namespace {

InputError keyError(const std::string& origin, const std::string& key, const std::string& message) {
  InputLocation where;
  where.file = origin;
  where.field = "prepare." + key;
  return InputError(where, message);
}

double number(const toml::node& node, const std::string& origin, const std::string& key) {
  if (auto v = node.value<double>()) return *v;
  throw keyError(origin, key, "expected a number");
}

/// The bed-slope keys of `[prepare]`; false for a key that is not one.
bool slopeKey(PrepareConfig& c, const std::string& key, const toml::node& v) {
  const std::string& o = c.origin;
  if (key == "min_slope") {
    c.min_slope = number(v, o, key);
    if (!(c.min_slope > 0 && c.min_slope < 1)) throw keyError(o, key, "must be > 0 and < 1");
  } else if (key == "rise_threshold_m") {
    c.rise_threshold_m = number(v, o, key);
    if (!(c.rise_threshold_m >= 0)) throw keyError(o, key, "must be >= 0");
  } else if (key == "sample_spacing_m") {
    c.sample_spacing_m = number(v, o, key);
    if (!(c.sample_spacing_m >= 0)) throw keyError(o, key, "must be >= 0 (0 = one DEM cell)");
  } else if (key == "replace") {
    const auto* arr = v.as_array();
    if (!arr) throw keyError(o, key, "expected an array of attribute names");
    for (const auto& item : *arr) {
      const auto s = item.value<std::string>();
      if (!s || (*s != "slope" && *s != "elevations"))
        throw keyError(o, key, "expected \"slope\" or \"elevations\"");
      c.replace.push_back(*s);
    }
  } else {
    return false;
  }
  return true;
}

}  // namespace

bool PrepareConfig::replaces(const std::string& attribute) const {
  return std::find(replace.begin(), replace.end(), attribute) != replace.end();
}

PrepareConfig PrepareConfig::fromString(const std::string& text, const std::string& origin) {
  const toml::table doc = detail::parseRunFile(text, origin);
  PrepareConfig c;
  c.origin = origin;
  const auto* table = doc["prepare"].as_table();
  if (!table) {
    if (doc.contains("prepare")) throw keyError(origin, "", "expected a table");
    return c;
  }
  for (const auto& [k, v] : *table) {
    const std::string key(k.str());
    if (slopeKey(c, key, v)) continue;
    throw keyError(origin, key, "unknown key (see docs/formats.md)");
  }
  return c;
}

PrepareConfig PrepareConfig::fromFile(const std::string& path) {
  return fromString(detail::readRunFile(path), path);
}

}  // namespace reachwise::io
