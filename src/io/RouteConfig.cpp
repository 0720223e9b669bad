#include "reachwise/io/RouteConfig.hpp"

#include "reachwise/io/Database.hpp"

#include <toml++/toml.h>

#include <cmath>
#include <filesystem>

#include <fmt/format.h>

#include "RunFile.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/routing/ReachRouter.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {

namespace {

namespace fs = std::filesystem;

InputError keyError(const std::string& origin, const std::string& key, const std::string& message) {
  InputLocation where;
  where.file = origin;
  where.field = "route." + key;
  return InputError(where, message);
}

template <class T>
T required(const toml::node& node, const std::string& origin, const std::string& key, const char* what) {
  if (auto v = node.value<T>()) return *v;
  throw keyError(origin, key, std::string("expected ") + what);
}

/// `hydrographs` (and `report_reaches`) may be one text ("outlets,R12") or
/// an array of texts.
std::string hydrographList(const toml::node& node, const std::string& origin, const std::string& key) {
  if (auto s = node.value<std::string>()) return *s;
  const auto* arr = node.as_array();
  if (!arr) throw keyError(origin, key, "expected a text or an array of texts");
  std::string out;
  for (const auto& item : *arr) {
    std::string v;
    if (auto s = item.value<std::string>())
      v = *s;
    else if (auto i = item.value<std::int64_t>())
      v = std::to_string(*i);
    else
      throw keyError(origin, key, "expected texts (or integer reach ids)");
    out += (out.empty() ? "" : ",") + v;
  }
  return out;
}

}  // namespace

RouteConfig RouteConfig::fromString(const std::string& text, const std::string& origin) {
  const toml::table doc = detail::parseRunFile(text, origin);
  RouteConfig c;
  const auto* route = doc["route"].as_table();
  if (!route) {
    if (doc.contains("route")) throw keyError(origin, "", "expected a table");
    return c;
  }
  const fs::path base = fs::path(origin).parent_path();
  auto path = [&](const toml::node& v, const std::string& key) {
    const fs::path p = required<std::string>(v, origin, key, "a file or folder path");
    return (p.is_relative() && !base.empty() ? base / p : p).string();
  };
  for (const auto& [k, v] : *route) {
    const std::string key(k.str());
    if (key == "inflow") c.inflow = path(v, key);
    else if (key == "lateral") c.lateral = path(v, key);
    else if (key == "members") c.members = path(v, key);
    else if (key == "out") {
      // A database (`PG:...`) is a connection, not a path beside the run file.
      const auto text = required<std::string>(v, origin, key, "a file path or a PG: connection");
      c.out = isDatabaseSource(text) ? text : path(v, key);
    } else if (key == "schema") c.schema = required<std::string>(v, origin, key, "a schema name");
    else if (key == "csv") c.csv = path(v, key);
    else if (key == "series") c.series = path(v, key);
    else if (key == "report") c.report = path(v, key);
    else if (key == "save_state") c.save_state = path(v, key);
    else if (key == "initial_state") c.initial_state = path(v, key);
    else if (key == "hydrographs") c.hydrographs = hydrographList(v, origin, key);
    else if (key == "report_reaches") c.report_reaches = hydrographList(v, origin, key);
    else if (key == "method") {
      c.method = required<std::string>(v, origin, key, "a text");
      if (*c.method != "vpmc" && *c.method != "mc" && *c.method != "muskingum" && *c.method != "diffusion")
        throw keyError(origin, key,
                       "expected \"vpmc\", \"mc\", \"muskingum\" or \"diffusion\", got \"" + *c.method + "\"");
    } else if (key == "units") {
      c.units = required<std::string>(v, origin, key, "a text");
      if (*c.units != "si" && *c.units != "us")
        throw keyError(origin, key, "expected \"si\" or \"us\", got \"" + *c.units + "\"");
    } else if (key == "dt") {
      c.dt_s = required<double>(v, origin, key, "a number of seconds");
      if (!std::isfinite(*c.dt_s) || !(*c.dt_s >= routing::TimeAxis::kMinStep_s))
        throw keyError(origin, key, fmt::format("must be a finite number of seconds, at least {} s",
                                                routing::TimeAxis::kMinStep_s));
    } else if (key == "diffusion_below") {
      c.diffusion_below = required<double>(v, origin, key, "a number");
      if (!std::isfinite(*c.diffusion_below) || *c.diffusion_below < 0)
        throw keyError(origin, key, "must be a finite number, 0 or more (0: never)");
    } else if (key == "spread_budget") {
      c.spread_budget = required<double>(v, origin, key, "a number");
      if (!(*c.spread_budget >= 0 && *c.spread_budget <= routing::kMaxGridSpreadBudget))
        throw keyError(origin, key, fmt::format("must be between 0 and {}", routing::kMaxGridSpreadBudget));
    } else if (key == "max_steps" || key == "max_hydrograph_rows") {
      const auto n = required<std::int64_t>(v, origin, key, "a whole number");
      if (n < 2) throw keyError(origin, key, "must be at least 2");
      (key == "max_steps" ? c.max_steps : c.max_hydrograph_rows) = static_cast<std::size_t>(n);
    } else if (key == "threads") {
      const auto t = required<std::int64_t>(v, origin, key, "a whole number");
      if (t < 1 || t > 4096) throw keyError(origin, key, "must be between 1 and 4096");
      c.threads = static_cast<unsigned>(t);
    } else if (key == "write_back") c.write_back = required<bool>(v, origin, key, "true or false");
    else if (key == "overwrite") c.overwrite = required<bool>(v, origin, key, "true or false");
    else if (key == "quiet") c.quiet = required<bool>(v, origin, key, "true or false");
    else if (key == "timings") c.timings = required<bool>(v, origin, key, "true or false");
    else throw keyError(origin, key, "unknown key (see docs/formats.md)");
  }
  return c;
}

RouteConfig RouteConfig::fromFile(const std::string& path) {
  return fromString(detail::readRunFile(path), path);
}

}  // namespace reachwise::io
