#include "reachwise/io/Gdal.hpp"

#include <cpl_error.h>
#include <gdal.h>
#include <ogr_api.h>

#include <mutex>

namespace reachwise::io {

namespace {
void CPL_STDCALL quietHandler(CPLErr, CPLErrorNum, const char*) {
  // Messages stay available through CPLGetLastErrorMsg(); readers put them
  // into typed errors with the file and feature they concern.
}
}  // namespace

void ensureGdal() {
  static std::once_flag once;
  std::call_once(once, [] {
    GDALAllRegister();
    CPLSetErrorHandler(quietHandler);
  });
}

std::string gdalVersion() { return GDALVersionInfo("RELEASE_NAME"); }

}  // namespace reachwise::io
