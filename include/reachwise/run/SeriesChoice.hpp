#pragma once
/// \file
/// Which reaches' hydrographs a run writes (`OutputRequest::hydrographs`).

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

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

/// Most hydrograph rows (reaches chosen × time steps) a run writes unless
/// the caller allows more (RouteRequest::max_hydrograph_rows;
/// `--max-hydrograph-rows` / `max_hydrograph_rows` in the run file): 20
/// million rows, about 1 GB of GeoPackage table (a year of hourly steps
/// at 2,000 reaches).
inline constexpr std::size_t kDefaultMaxHydrographRows = 20'000'000;

/// The reaches named by `spec`: comma-separated `all`, `none`, `outlets`,
/// `confluences` (every reach whose outflow meets another at a
/// confluence), `auto` (see the constants above) and reach ids; blanks
/// around each item are ignored. Unknown ids are one InputError listing
/// them all.
io::SeriesSelection chooseSeries(std::string_view spec, const network::NetworkPlan& plan);

/// Throws InputError (field `hydrographs`) when `spec` chooses more than
/// `max_rows` rows (reaches × `steps`), saying how many and how to allow
/// them. Called before routing.
void requireHydrographRows(std::string_view spec, const network::NetworkPlan& plan, std::size_t steps,
                           std::size_t max_rows);

/// Most reaches `--report-reaches` may name (each gets a panel).
inline constexpr std::size_t kMostReportReaches = 24;

/// The reaches `ids` names (comma-separated reach ids, blanks around each
/// ignored, a repeat dropped), in the order given, as plan indices. Unknown
/// ids are one InputError (field `field`) listing them all; so are more
/// than kMostReportReaches ids.
std::vector<std::uint32_t> namedReaches(std::string_view ids, const network::NetworkPlan& plan,
                                        const std::string& field);

}  // namespace reachwise::run
