#pragma once
// Reading the TOML run file shared by the [network] and [route] tables
// (private to src/io).

#include <toml++/toml.h>

#include <string>

#include "reachwise/Error.hpp"

namespace reachwise::io::detail {

/// An InputError naming the run file `origin` and the key.
InputError configError(const std::string& origin, const std::string& key, const std::string& message);

/// The text value of `node`, else an InputError naming the key.
std::string requireString(const toml::node& node, const std::string& origin, const std::string& key);

/// The finite number (integer or float, not a boolean) of `node`, else an
/// InputError naming the key.
double requireNumber(const toml::node& node, const std::string& origin, const std::string& key);

/// Parses `text`; a syntax error is an InputError naming `origin` and the line.
toml::table parseRunFile(const std::string& text, const std::string& origin);

/// The whole file `path` as text; InputError naming it when it cannot be read.
std::string readRunFile(const std::string& path);

}  // namespace reachwise::io::detail
