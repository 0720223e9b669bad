#pragma once
// Reading the TOML run file shared by the [network] and [route] tables
// (private to src/io).

#include <toml++/toml.h>

#include <string>

namespace reachwise::io::detail {

/// Parses `text`; a syntax error is an InputError naming `origin` and the line.
toml::table parseRunFile(const std::string& text, const std::string& origin);

/// The whole file `path` as text; InputError naming it when it cannot be read.
std::string readRunFile(const std::string& path);

}  // namespace reachwise::io::detail
