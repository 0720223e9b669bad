// Bed slopes from a DEM: a robust fit of each reach's long profile, then
// end elevations conditioned over the network (declared in terrain/Dem.hpp).
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachProblem.hpp"
#include "reachwise/terrain/Dem.hpp"

namespace reachwise::terrain {

namespace {

using network::ProblemCode;
using network::ReachGraph;
using Vertex = ReachGraph::Vertex;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Profiles with more valid samples than this are reduced to this many bins.
constexpr std::size_t kMaxFitPoints = 1000;

/// Median of `v` (reordered); NaN when empty.
double median(std::vector<double>& v) {
  if (v.empty()) return kNaN;
  const std::size_t mid = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid), v.end());
  const double upper = v[mid];
  if (v.size() % 2 == 1) return upper;
  const double lower = *std::max_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid));
  return 0.5 * (lower + upper);
}

network::Problem at(const ReachGraph& graph, Vertex v, network::Point2 where, ProblemCode code,
                    std::string message) {
  return network::reachProblem(code, graph.record(v), where.x, where.y, std::move(message));
}

double fraction(const ReachSlope& r) {
  return r.samples == 0 ? 0.0 : static_cast<double>(r.valid_samples) / static_cast<double>(r.samples);
}

}  // namespace

ProfileFit theilSen(const std::vector<ProfileSample>& samples) {
  // Theil, H. (1950) A rank-invariant method of linear and polynomial
  // regression analysis, I-III. Proc. Koninklijke Nederlandse Akademie van
  // Wetenschappen 53; Sen, P.K. (1968) Estimates of the regression
  // coefficient based on Kendall's tau. J. American Statistical
  // Association 63(324), 1379-1389 (both from memory). The intercept as the
  // median of the residual intercepts is the usual companion (Sen 1968).
  std::vector<double> d, z;
  for (const auto& s : samples)
    if (s.valid) {
      d.push_back(s.distance_m);
      z.push_back(s.elevation_m);
    }
  ProfileFit fit;
  if (d.size() > kMaxFitPoints) {
    // Equal-count bins in distance order; each bin's median distance and
    // median elevation (a spike or pit narrower than half a bin vanishes).
    std::vector<double> bd, bz;
    const std::size_t n = d.size();
    for (std::size_t b = 0; b < kMaxFitPoints; ++b) {
      const std::size_t lo = b * n / kMaxFitPoints, hi = (b + 1) * n / kMaxFitPoints;
      std::vector<double> dd(d.begin() + static_cast<std::ptrdiff_t>(lo), d.begin() + static_cast<std::ptrdiff_t>(hi));
      std::vector<double> zz(z.begin() + static_cast<std::ptrdiff_t>(lo), z.begin() + static_cast<std::ptrdiff_t>(hi));
      bd.push_back(median(dd));
      bz.push_back(median(zz));
    }
    d.swap(bd);
    z.swap(bz);
  }
  if (d.size() < 2) return fit;
  std::vector<double> gradients;
  gradients.reserve(d.size() * (d.size() - 1) / 2);
  for (std::size_t i = 0; i < d.size(); ++i)
    for (std::size_t j = i + 1; j < d.size(); ++j)
      if (d[j] != d[i]) gradients.push_back((z[j] - z[i]) / (d[j] - d[i]));
  if (gradients.empty()) return fit;
  fit.gradient = median(gradients);
  std::vector<double> intercepts(d.size());
  for (std::size_t i = 0; i < d.size(); ++i) intercepts[i] = z[i] - fit.gradient * d[i];
  fit.intercept_m = median(intercepts);
  fit.used = d.size();
  return fit;
}

std::string flagNames(unsigned flags) {
  static constexpr std::pair<unsigned, const char*> kNames[] = {
      {kFloored, "floored"},        {kInterpolated, "interpolated"}, {kPartlyNodata, "nodata"},
      {kRising, "rising"},          {kCarved, "carved"},             {kNoElevation, "no_elevation"}};
  std::string out;
  for (const auto& [bit, name] : kNames)
    if (flags & bit) out += (out.empty() ? "" : ",") + std::string(name);
  return out;
}

std::vector<network::Point3> flowLine(const ReachGraph& graph, Vertex v) {
  std::vector<network::Point3> line = graph.record(v).line;
  if (graph.flipped(v)) std::reverse(line.begin(), line.end());
  return line;
}

void conditionElevations(const ReachGraph& graph, const SlopeOptions& options,
                         std::vector<ReachSlope>& fits, network::ProblemList& problems) {
  // Carving: a node keeps the lower of its own fitted elevation and the
  // elevations upstream of it, so that elevations never rise along a flow
  // path; a reach too flat is steepened to the minimum slope by lowering
  // its downstream end, which carries on downstream. This is the carving
  // (breaching) alternative to filling discussed by Soille, P. (2004)
  // Optimal removal of spurious pits in grid digital elevation models.
  // Water Resources Research 40, W12509 (from memory), applied here to the
  // reach ends rather than to grid cells.
  REACHWISE_ASSERT(fits.size() == graph.size());
  const auto order = graph.topologicalOrder();
  if (!order) throw InvalidParameter("network", "has a cycle; bed slopes need a flow order");
  auto hasFit = [&](Vertex v) { return std::isfinite(fits[v].fit_up_m) && std::isfinite(fits[v].fit_down_m); };
  for (const Vertex v : *order) {
    ReachSlope& r = fits[v];
    const double length = graph.lengthM(v);
    double inflow = kNaN;  // lowest conditioned bottom of the reaches upstream
    for (const Vertex u : graph.upstream(v))
      if (std::isfinite(fits[u].down_elevation_m))
        inflow = std::isnan(inflow) ? fits[u].down_elevation_m : std::min(inflow, fits[u].down_elevation_m);
    double top = kNaN, bottom = kNaN;
    if (hasFit(v)) {
      top = r.fit_up_m;
      if (std::isfinite(inflow) && inflow < top) {
        top = inflow;
        r.flags |= kCarved;
      }
      bottom = r.fit_down_m;
      if (bottom > top) {
        bottom = top;
        r.flags |= kCarved;
      }
    } else {
      // No fit: linear in distance along the flow path between the node
      // upstream and the top of the first fitted reach downstream (the first
      // branch at a bifurcation).
      double anchor = kNaN, distance = length;
      for (auto down = graph.downstream(v); !down.empty(); down = graph.downstream(down.front())) {
        const Vertex w = down.front();
        if (w == v) break;
        if (hasFit(w)) {
          anchor = fits[w].fit_up_m;
          break;
        }
        distance += graph.lengthM(w);
      }
      if (std::isfinite(inflow) && std::isfinite(anchor)) {
        top = inflow;
        const double low = std::min(anchor, top);
        bottom = distance > 0 ? top - (top - low) * length / distance : low;
      } else if (std::isfinite(inflow)) {
        top = bottom = inflow;
      } else if (std::isfinite(anchor)) {
        top = bottom = anchor;
      }
      r.flags |= std::isfinite(top) ? kInterpolated : kNoElevation;
      const auto where = graph.top(v);
      problems.push_back(at(
          graph, v, where, ProblemCode::DemNodata,
          std::isfinite(top)
              ? fmt::format("reach {}: {} of {} DEM samples valid (valid fraction {:.2f}), too "
                            "few for a profile; elevations interpolated from the neighbouring "
                            "reaches along the flow path",
                            graph.id(v), r.valid_samples, r.samples, fraction(r))
              : fmt::format("reach {}: {} of {} DEM samples valid (valid fraction {:.2f}), too "
                            "few for a profile, and no neighbouring reach with DEM elevations; "
                            "no slope from the DEM",
                            graph.id(v), r.valid_samples, r.samples, fraction(r))));
    }
    r.up_elevation_m = top;
    r.down_elevation_m = bottom;
    if (!std::isfinite(top) || !(length > 0)) continue;
    r.slope = (top - bottom) / length;
    if (r.slope < options.min_slope) {
      const double was = r.slope;
      r.slope = options.min_slope;
      r.down_elevation_m = top - options.min_slope * length;
      r.flags |= kFloored;
      problems.push_back(at(graph, v, graph.top(v), ProblemCode::SlopeFloored,
                            fmt::format("reach {}: bed slope {:.3g} from the DEM raised to the "
                                        "minimum {:g}",
                                        graph.id(v), was, options.min_slope)));
    }
  }
}

std::vector<ReachSlope> bedSlopes(const ReachGraph& graph, const Dem& dem, const SlopeOptions& options,
                                  network::ProblemList& problems) {
  std::vector<ReachSlope> out(graph.size());
  const std::string& crs = graph.table().crs_wkt;
  for (Vertex v = 0; v < graph.size(); ++v) {
    ReachSlope& r = out[v];
    const double length = graph.lengthM(v);
    const auto samples = dem.profile(flowLine(graph, v), length, crs, options.spacing_m);
    r.samples = samples.size();
    r.valid_samples = static_cast<std::size_t>(
        std::count_if(samples.begin(), samples.end(), [](const auto& s) { return s.valid; }));
    if (r.valid_samples < r.samples) r.flags |= kPartlyNodata;
    const ProfileFit fit = theilSen(samples);
    if (fit.used < 2) continue;  // too few valid samples: conditionElevations reports it
    r.raw_slope = -fit.gradient;
    r.fit_up_m = fit.intercept_m;
    r.fit_down_m = fit.intercept_m + fit.gradient * length;
    if (fraction(r) < 0.5)
      problems.push_back(at(graph, v, graph.top(v), ProblemCode::DemNodata,
                            fmt::format("reach {}: {} of {} DEM samples valid (valid fraction {:.2f}); "
                                        "the slope comes from the valid ones",
                                        graph.id(v), r.valid_samples, r.samples, fraction(r))));
    const double rise = r.fit_down_m - r.fit_up_m;
    if (rise > options.rise_threshold_m) {
      r.flags |= kRising;
      problems.push_back(at(graph, v, graph.top(v), ProblemCode::DemProfileRise,
                            fmt::format("reach {}: the DEM profile rises {:.2f} m in the flow "
                                        "direction (more than {:g} m); the line may run against "
                                        "the flow or the DEM may not follow the channel",
                                        graph.id(v), rise, options.rise_threshold_m)));
    }
  }
  conditionElevations(graph, options, out, problems);
  return out;
}

}  // namespace reachwise::terrain
