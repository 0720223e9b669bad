#include "reachwise/io/Database.hpp"

#include <cctype>
#include <cstddef>

namespace reachwise::io {

bool isDatabaseSource(std::string_view source) {
  return source.size() >= 3 && std::toupper(static_cast<unsigned char>(source[0])) == 'P' &&
         std::toupper(static_cast<unsigned char>(source[1])) == 'G' && source[2] == ':';
}

std::string redactedConnection(std::string_view source) {
  // libpq keyword/value syntax: `password = value`, the value bare (up to
  // a blank) or in single quotes with \' and \\ escapes.
  std::string out;
  std::size_t i = 0;
  const auto lower = [](char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); };
  while (i < source.size()) {
    const std::string_view key = "password";
    bool at_key = i + key.size() <= source.size() &&
                  (i == 0 || std::isspace(static_cast<unsigned char>(source[i - 1])) || source[i - 1] == ':');
    for (std::size_t k = 0; at_key && k < key.size(); ++k) at_key = lower(source[i + k]) == key[k];
    std::size_t j = i + key.size();
    while (at_key && j < source.size() && std::isspace(static_cast<unsigned char>(source[j]))) ++j;
    if (!at_key || j >= source.size() || source[j] != '=') {
      out += source[i++];
      continue;
    }
    out.append(source.substr(i, j + 1 - i));
    ++j;
    while (j < source.size() && std::isspace(static_cast<unsigned char>(source[j]))) ++j;
    if (j < source.size() && source[j] == '\'') {
      for (++j; j < source.size() && source[j] != '\''; ++j)
        if (source[j] == '\\') ++j;
      ++j;
    } else {
      while (j < source.size() && !std::isspace(static_cast<unsigned char>(source[j]))) ++j;
    }
    out += "***";
    i = j;
  }
  return out;
}

std::string quotedIdentifier(std::string_view name) {
  std::string q = "\"";
  for (char c : name) q += c == '"' ? std::string("\"\"") : std::string(1, c);
  return q + "\"";
}

std::string quotedLiteral(std::string_view text) {
  std::string q = "'";
  for (char c : text) q += c == '\'' ? std::string("''") : std::string(1, c);
  return q + "'";
}

}  // namespace reachwise::io
