#pragma once
/// \file
/// A digital elevation model (any GDAL raster) sampled along reach lines,
/// and the bed slopes derived from it: a robust fit of each reach's long
/// profile, conditioned so that elevations never rise downstream along a
/// flow path (docs/formats.md, "prepare").

#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include "reachwise/network/Problem.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/ReachTable.hpp"

namespace reachwise::terrain {

/// One point of a long profile.
struct ProfileSample {
  double distance_m = 0;   ///< along the reach from its upstream end
  double elevation_m = 0;  ///< meaningful only when `valid`
  bool valid = false;      ///< false: DEM nodata, or outside the raster
};

/// A raster opened for sampling. Reads by windows (never the whole raster
/// for one reach), so rasters much larger than memory work.
class Dem {
public:
  /// Opens band 1 of `path` (GeoTIFF, VRT, any raster GDAL reads). Throws
  /// InputError naming the file when it cannot be opened, has no band or no
  /// georeferencing (geotransform).
  explicit Dem(const std::string& path);
  ~Dem();
  Dem(const Dem&) = delete;
  Dem& operator=(const Dem&) = delete;

  const std::string& path() const noexcept { return path_; }
  /// Cell size in metres (the smaller side; for a geographic raster the
  /// north–south side at 111.32 km per degree).
  double cellSizeM() const noexcept { return cell_m_; }

  /// The long profile of `line` (vertices in flow order, coordinates in the
  /// CRS given by `line_crs_wkt`; empty WKT = the raster's CRS), sampled
  /// bilinearly every `spacing_m` metres or less, both ends included.
  /// `length_m` is the reach length in metres: the planar distance along
  /// the line is scaled to it. Throws InputError naming the file when the
  /// two CRSs cannot be transformed into each other.
  std::vector<ProfileSample> profile(const std::vector<network::Point3>& line, double length_m,
                                     const std::string& line_crs_wkt, double spacing_m) const;

private:
  struct Impl;
  std::string path_;
  double cell_m_ = 0;
  std::unique_ptr<Impl> impl_;
};

/// A straight line fitted to a long profile: elevation = intercept_m +
/// gradient × distance (gradient negative when the bed falls downstream).
struct ProfileFit {
  double intercept_m = 0;
  double gradient = 0;
  std::size_t used = 0;  ///< valid samples the fit used (0: no fit)
};

/// The Theil–Sen estimator of elevation against distance: the gradient is
/// the median of the gradients of all pairs of valid samples (Theil 1950;
/// Sen 1968), the intercept the median of z − gradient·d. Robust to up to
/// about 29 % of wild samples (bridge decks, pits). Profiles longer than
/// 1000 valid samples are first reduced to 1000 bins, each the median of
/// its samples (which keeps the fit robust and its cost bounded).
ProfileFit theilSen(const std::vector<ProfileSample>& samples);

/// Settings of the bed slopes (the `[prepare]` table of a run file).
struct SlopeOptions {
  double min_slope = 1e-4;       ///< slopes below are raised to it (`slope_floored`)
  double rise_threshold_m = 2.0; ///< a raw profile rising more than this is reported
  /// Sample spacing in metres; 0 = one DEM cell.
  double spacing_m = 0;
};

/// Flags of one reach's result (bits of ReachSlope::flags).
enum SlopeFlag : unsigned {
  kFloored = 1u << 0,       ///< slope raised to min_slope
  kInterpolated = 1u << 1,  ///< no valid sample: elevations from neighbouring reaches
  kPartlyNodata = 1u << 2,  ///< some samples invalid
  kRising = 1u << 3,        ///< the raw profile rises downstream more than the threshold
  kCarved = 1u << 4,        ///< an end lowered to keep elevations non-increasing downstream
  kNoElevation = 1u << 5,   ///< no valid sample and no neighbour to take elevations from
};

/// "floored,interpolated,..." for the set bits; "" for none.
std::string flagNames(unsigned flags);

/// The DEM's result for one reach (a vertex of the graph).
struct ReachSlope {
  double up_elevation_m = network::ReachRecord::kUnset;    ///< conditioned, upstream end
  double down_elevation_m = network::ReachRecord::kUnset;  ///< conditioned, downstream end
  double slope = network::ReachRecord::kUnset;      ///< (up − down) / length, at least min_slope
  double raw_slope = network::ReachRecord::kUnset;  ///< −gradient of the fit (NaN: no fit)
  double fit_up_m = network::ReachRecord::kUnset;   ///< fitted end elevations, before conditioning
  double fit_down_m = network::ReachRecord::kUnset;
  std::size_t samples = 0;
  std::size_t valid_samples = 0;
  unsigned flags = 0;
};

/// Fitted end elevations of every reach → conditioned ones (no network
/// needed beyond `graph`, no raster): the step of bedSlopes() after the
/// profiles, public for tests. `fits[v]` holds fit_up_m / fit_down_m (NaN
/// when the reach had no valid sample) and samples; results are filled in
/// place. Throws InvalidParameter when the graph has a cycle.
void conditionElevations(const network::ReachGraph& graph, const SlopeOptions& options,
                         std::vector<ReachSlope>& fits, network::ProblemList& problems);

/// Samples every reach of `graph` on `dem`, fits each profile and
/// conditions the end elevations over the network. Reports `dem_nodata`,
/// `dem_profile_rise` and `slope_floored` problems at their reaches.
std::vector<ReachSlope> bedSlopes(const network::ReachGraph& graph, const Dem& dem,
                                  const SlopeOptions& options, network::ProblemList& problems);

/// The reach's line in flow order (reversed when the graph judges the
/// stored line to run against the flow).
std::vector<network::Point3> flowLine(const network::ReachGraph& graph, network::ReachGraph::Vertex v);

}  // namespace reachwise::terrain
