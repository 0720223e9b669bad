#pragma once
/// \file
/// A synthetic case for tests and benchmarks at any size: a random river
/// network (GeoPackage), a storm train as lateral inflow (CF-NetCDF) and
/// inflow at each basin's farthest headwater (CSV). docs/formats.md,
/// "Synthetic networks".

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "reachwise/network/SyntheticNetwork.hpp"
#include "reachwise/routing/TimeAxis.hpp"

namespace reachwise::io {
class OutputCommit;
}

namespace reachwise::run {

struct SyntheticRequest {
  std::string gpkg;                ///< the network GeoPackage (layer `reaches`, EPSG:32633)
  std::size_t reaches = 0;
  std::size_t outlets = 1;
  std::size_t lakes = 0;           ///< lakes to place (layer `lakes` of the GeoPackage); 0: none
  std::uint64_t seed = 1;
  routing::TimeAxis axis;          ///< the forcing's time axis
  std::string lateral_nc;          ///< lateral inflow of every reach, CF-NetCDF; empty: none
  std::string inflow_csv;          ///< inflow at each basin's farthest headwater, CSV; empty: none
  bool overwrite = false;          ///< replace existing outputs
  std::string history;             ///< how the case was asked for (the NetCDF `history`)
};

/// A synthetic case, generated and ready to write. Every output is
/// checked before any is written.
class SyntheticCase {
public:
  /// Refuses an existing output (InputError naming it, unless
  /// `overwrite`), then generates the network; InvalidParameter for a
  /// size the generator cannot make or, when forcing is asked for, an
  /// axis TimeAxis::make refuses.
  explicit SyntheticCase(SyntheticRequest request);

  const network::SyntheticNetwork& network() const noexcept { return net_; }
  const std::vector<network::SyntheticLake>& lakes() const noexcept { return lakes_; }
  const SyntheticRequest& request() const noexcept { return request_; }

  /// Each writes its file under a temporary name and hands it to `into`
  /// (without one: renames it in place when complete); the forcing writers
  /// do nothing when their file was not asked for. With one OutputCommit
  /// for all three, the files appear together or not at all.
  void writeNetwork(io::OutputCommit* into = nullptr) const;
  void writeLateral(io::OutputCommit* into = nullptr) const;
  void writeInflow(io::OutputCommit* into = nullptr) const;

private:
  SyntheticRequest request_;
  network::SyntheticNetwork net_;
  std::vector<network::SyntheticLake> lakes_;
  network::SyntheticStorm storm_;
};

}  // namespace reachwise::run
