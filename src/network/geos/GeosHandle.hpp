#pragma once
// Private RAII helpers around the reentrant GEOS C API: one context per
// call site (no shared global state, so callers may run in parallel) and
// owning geometry pointers.

#include <geos_c.h>

#include <memory>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::network::geos {

class GeosContext {
public:
  GeosContext() : handle_(GEOS_init_r()) {
    if (!handle_) throw InternalError("GEOS: cannot create a context");
    GEOSContext_setErrorMessageHandler_r(handle_, &GeosContext::onError, &last_error_);
  }
  ~GeosContext() { GEOS_finish_r(handle_); }
  GeosContext(const GeosContext&) = delete;
  GeosContext& operator=(const GeosContext&) = delete;

  GEOSContextHandle_t get() const noexcept { return handle_; }
  const std::string& lastError() const noexcept { return last_error_; }

private:
  static void onError(const char* message, void* userdata) {
    *static_cast<std::string*>(userdata) = message ? message : "";
  }
  GEOSContextHandle_t handle_;
  std::string last_error_;
};

struct GeomDeleter {
  GEOSContextHandle_t ctx;
  void operator()(GEOSGeometry* g) const noexcept {
    if (g) GEOSGeom_destroy_r(ctx, g);
  }
};
using GeomPtr = std::unique_ptr<GEOSGeometry, GeomDeleter>;

inline GeomPtr own(const GeosContext& ctx, GEOSGeometry* g) {
  if (!g) throw InternalError("GEOS: " + ctx.lastError());
  return GeomPtr(g, GeomDeleter{ctx.get()});
}

inline GeomPtr makePoint(const GeosContext& ctx, double x, double y) {
  return own(ctx, GEOSGeom_createPointFromXY_r(ctx.get(), x, y));
}

/// A 2D line string from vertices (Z is not needed for the planar work here).
inline GeomPtr makeLine(const GeosContext& ctx, const std::vector<Point3>& pts) {
  GEOSCoordSequence* seq =
      GEOSCoordSeq_create_r(ctx.get(), static_cast<unsigned>(pts.size()), 3);
  if (!seq) throw InternalError("GEOS: " + ctx.lastError());
  for (unsigned i = 0; i < pts.size(); ++i)
    GEOSCoordSeq_setXYZ_r(ctx.get(), seq, i, pts[i].x, pts[i].y, pts[i].z);
  return own(ctx, GEOSGeom_createLineString_r(ctx.get(), seq));  // takes the sequence
}

/// Vertices of a line string, with Z (NaN when absent).
inline std::vector<Point3> linePoints(const GeosContext& ctx, const GEOSGeometry* line) {
  const GEOSCoordSequence* seq = GEOSGeom_getCoordSeq_r(ctx.get(), line);
  unsigned n = 0;
  if (!seq || !GEOSCoordSeq_getSize_r(ctx.get(), seq, &n)) return {};
  unsigned dims = 2;
  GEOSCoordSeq_getDimensions_r(ctx.get(), seq, &dims);
  std::vector<Point3> out(n);
  for (unsigned i = 0; i < n; ++i) {
    GEOSCoordSeq_getXY_r(ctx.get(), seq, i, &out[i].x, &out[i].y);
    if (dims >= 3) GEOSCoordSeq_getZ_r(ctx.get(), seq, i, &out[i].z);
  }
  return out;
}

struct TreeDeleter {
  GEOSContextHandle_t ctx;
  void operator()(GEOSSTRtree* t) const noexcept {
    if (t) GEOSSTRtree_destroy_r(ctx, t);
  }
};
using TreePtr = std::unique_ptr<GEOSSTRtree, TreeDeleter>;

/// STRtree whose items are indices (stored in the item pointer).
class IndexTree {
public:
  explicit IndexTree(const GeosContext& ctx)
      : ctx_(ctx), tree_(GEOSSTRtree_create_r(ctx.get(), 10), TreeDeleter{ctx.get()}) {
    if (!tree_) throw InternalError("GEOS: cannot create an STRtree");
  }
  /// The tree keeps only the envelope reference, so `geoms_` owns the geometry.
  void insert(GeomPtr geom, std::size_t index) {
    GEOSSTRtree_insert_r(ctx_.get(), tree_.get(), geom.get(), reinterpret_cast<void*>(index + 1));
    geoms_.push_back(std::move(geom));
  }
  /// Indices whose envelopes meet the box around (x, y) of half-width r.
  std::vector<std::size_t> query(double x, double y, double r) const {
    std::vector<std::size_t> hits;
    GeomPtr box = own(ctx_, GEOSGeom_createRectangle_r(ctx_.get(), x - r, y - r, x + r, y + r));
    GEOSSTRtree_query_r(ctx_.get(), tree_.get(), box.get(), &IndexTree::collect, &hits);
    return hits;
  }

private:
  static void collect(void* item, void* userdata) {
    static_cast<std::vector<std::size_t>*>(userdata)->push_back(
        reinterpret_cast<std::size_t>(item) - 1);
  }
  const GeosContext& ctx_;
  TreePtr tree_;
  std::vector<GeomPtr> geoms_;
};

}  // namespace reachwise::network::geos
