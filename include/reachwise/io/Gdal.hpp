#pragma once
/// \file
/// GDAL set-up shared by every reader and writer.

#include <string>

namespace reachwise::io {

/// Registers GDAL's drivers once (thread-safe) and routes GDAL's own error
/// messages away from stderr so that reachwise reports them itself.
void ensureGdal();

/// When `source` is a file with a non-empty SQLite rollback journal beside
/// it (`SOURCE-journal`, left by a writer that was killed mid-transaction,
/// e.g. a `--write-back`), SQLite must roll it back before the file can be
/// read, and a read-only open cannot ("attempt to write a readonly
/// database"). When the file and its folder are writable, opens it
/// read-write once so that SQLite rolls the journal back, and prints a note
/// on stderr; else throws InputError naming the file and what to do.
/// Nothing for anything else (no journal, not a file, a connection string).
void recoverHotJournal(const std::string& source);

/// GDAL's release name, e.g. "3.6.2".
std::string gdalVersion();

}  // namespace reachwise::io
