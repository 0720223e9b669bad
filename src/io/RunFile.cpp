#include "RunFile.hpp"

#include <cmath>
#include <fstream>
#include <sstream>

#include "reachwise/Error.hpp"

namespace reachwise::io::detail {

InputError configError(const std::string& origin, const std::string& key, const std::string& message) {
  InputLocation where;
  where.file = origin;
  where.field = key;
  return InputError(where, message);
}

std::string requireString(const toml::node& node, const std::string& origin, const std::string& key) {
  if (auto s = node.value<std::string>()) return *s;
  throw configError(origin, key, "expected a text value");
}

double requireNumber(const toml::node& node, const std::string& origin, const std::string& key) {
  if (node.is_boolean()) throw configError(origin, key, "expected a number");
  if (auto d = node.value<double>()) {  // integers convert too
    if (!std::isfinite(*d)) throw configError(origin, key, "must be finite");
    return *d;
  }
  throw configError(origin, key, "expected a number");
}

toml::table parseRunFile(const std::string& text, const std::string& origin) {
  try {
    return toml::parse(text, origin);
  } catch (const toml::parse_error& e) {
    InputLocation where;
    where.file = origin;
    where.line = static_cast<std::int64_t>(e.source().begin.line);
    throw InputError(where, std::string(e.description()));
  }
}

std::string readRunFile(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    InputLocation where;
    where.file = path;
    throw InputError(where, "cannot open the run file");
  }
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace reachwise::io::detail
