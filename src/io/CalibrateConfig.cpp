#include "reachwise/io/CalibrateConfig.hpp"

#include <toml++/toml.h>

#include <cstdint>

#include "RunFile.hpp"
#include "reachwise/Error.hpp"

namespace reachwise::io {

namespace {

InputError keyError(const std::string& origin, const std::string& key, const std::string& message) {
  return detail::configError(origin, key.empty() ? std::string("calibrate") : "calibrate." + key, message);
}

/// A whole number of at least `least` (a float or a boolean is refused).
std::size_t count(const toml::node& node, const std::string& origin, const std::string& key, std::int64_t least) {
  const auto v = node.is_integer() ? node.value<std::int64_t>() : std::nullopt;
  if (!v) throw keyError(origin, key, "expected a whole number");
  if (*v < least) throw keyError(origin, key, "must be at least " + std::to_string(least));
  return static_cast<std::size_t>(*v);
}

}  // namespace

CalibrateConfig CalibrateConfig::fromString(const std::string& text, const std::string& origin) {
  const toml::table doc = detail::parseRunFile(text, origin);
  CalibrateConfig c;
  const auto* table = doc["calibrate"].as_table();
  if (!table) {
    if (doc.contains("calibrate")) throw keyError(origin, "", "expected a table");
    return c;
  }
  const auto number = [&](const toml::node& v, const std::string& key) {
    return detail::requireNumber(v, origin, "calibrate." + key);
  };
  const auto text_of = [&](const toml::node& v, const std::string& key) {
    return detail::requireString(v, origin, "calibrate." + key);
  };
  for (const auto& [k, v] : *table) {
    const std::string key(k.str());
    if (key == "parameter") {
      c.parameter = text_of(v, key);
      if (*c.parameter != "n" && *c.parameter != "width" && *c.parameter != "kx")
        throw keyError(origin, key, "expected \"n\", \"width\" or \"kx\", got \"" + *c.parameter + "\"");
    } else if (key == "objective") {
      c.objective = text_of(v, key);
      if (*c.objective != "kge" && *c.objective != "nse" && *c.objective != "nse_peak")
        throw keyError(origin, key, "expected \"kge\", \"nse\" or \"nse_peak\", got \"" + *c.objective + "\"");
    } else if (key == "lower" || key == "upper") {
      const double b = number(v, key);
      if (!(b > 0)) throw keyError(origin, key, "a multiplier bound must be positive");
      (key == "lower" ? c.lower : c.upper) = b;
    } else if (key == "tolerance") {
      c.tolerance = number(v, key);
      // A step in log m (docs/methods.md §11): about a relative change of the multiplier.
      if (!(*c.tolerance > 0 && *c.tolerance < 1)) throw keyError(origin, key, "must lie between 0 and 1");
    } else if (key == "max_evaluations") {
      c.max_evaluations = count(v, origin, key, 4);
    } else if (key == "min_observations") {
      c.min_observations = count(v, origin, key, 1);
    } else if (key == "max_steps") {
      c.max_steps = count(v, origin, key, 2);
    } else {
      throw keyError(origin, key, "unknown key (see docs/formats.md, \"Calibration\")");
    }
  }
  if (c.lower && c.upper && !(*c.lower < *c.upper))
    throw keyError(origin, "lower", "must be below calibrate.upper");
  return c;
}

CalibrateConfig CalibrateConfig::fromFile(const std::string& path) {
  return fromString(detail::readRunFile(path), path);
}

}  // namespace reachwise::io
