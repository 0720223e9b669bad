#include "RunFile.hpp"

#include <fstream>
#include <sstream>

#include "reachwise/Error.hpp"

namespace reachwise::io::detail {

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
