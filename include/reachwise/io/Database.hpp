#pragma once
/// \file
/// PostgreSQL/PostGIS data sources as GDAL opens them (`PG:` followed by
/// libpq connection options or a service name): recognising them, naming
/// them in messages without their password, and quoting what users name
/// (schemas, tables) for the SQL reachwise sends (docs/formats.md,
/// "Results in a database").

#include <string>
#include <string_view>

namespace reachwise::io {

/// Whether `source` is a PostgreSQL connection for GDAL (`PG:...`, any case).
bool isDatabaseSource(std::string_view source);

/// `source` with the value of any `password` option replaced by `***`, for
/// messages and the `run_info` table.
std::string redactedConnection(std::string_view source);

/// An SQL identifier (schema, table, column) in double quotes, inner double
/// quotes doubled: any name, quotes, semicolons and non-ASCII included, is
/// taken as a name and never as SQL.
std::string quotedIdentifier(std::string_view name);

/// An SQL string literal in single quotes, inner single quotes doubled
/// (with `standard_conforming_strings`, on by default since PostgreSQL
/// 9.1, a backslash is an ordinary character; an E'' literal is never made).
std::string quotedLiteral(std::string_view text);

/// The default schema of `route --out PG:...`.
inline constexpr const char* kDefaultSchema = "reachwise";

}  // namespace reachwise::io
