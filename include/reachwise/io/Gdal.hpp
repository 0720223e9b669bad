#pragma once
/// \file
/// GDAL set-up shared by every reader and writer.

#include <string>

namespace reachwise::io {

/// Registers GDAL's drivers once (thread-safe) and routes GDAL's own error
/// messages away from stderr so that reachwise reports them itself.
void ensureGdal();

/// GDAL's release name, e.g. "3.6.2".
std::string gdalVersion();

}  // namespace reachwise::io
