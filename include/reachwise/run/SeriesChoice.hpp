#pragma once
/// \file
/// Which reaches' hydrographs a run writes (`OutputRequest::hydrographs`).

#include <cstddef>
#include <string_view>

#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/network/NetworkPlan.hpp"

namespace reachwise::run {

/// `auto` writes every reach's hydrograph on networks smaller than this.
inline constexpr std::size_t kAutoAllBelowReaches = 10000;
/// On larger networks `auto` writes the outlets and the incoming branches
/// of this many confluences, those with the largest upstream networks (so
/// that the row count does not grow with the network: half of all reaches
/// meet at some confluence).
inline constexpr std::size_t kAutoConfluences = 1000;

/// The reaches named by `spec`: comma-separated `all`, `none`, `outlets`,
/// `confluences` (every reach whose outflow meets another at a
/// confluence), `auto` (see the constants above) and reach ids. Unknown
/// ids are one InputError listing them all.
io::SeriesSelection chooseSeries(std::string_view spec, const network::NetworkPlan& plan);

}  // namespace reachwise::run
