// Fuzz target: the GeoPackage network reader (io/NetworkReader.hpp) on
// mutated copies of the sample networks (topology chosen automatically: from
// the `to_reach` field where the layer has one, else from the geometry).

#include <cstdint>

#include "FuzzSupport.hpp"
#include "reachwise/io/NetworkReader.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace reachwise;
  const fuzz::ScratchFile file(data, size, ".gpkg");
  fuzz::refusalIsFine([&] { (void)io::lineLayers(file.path().string()); });
  fuzz::refusalIsFine([&] {
    network::ProblemList problems;
    (void)io::readNetwork(file.path().string(), io::ReadOptions{}, problems);
  });
  return 0;
}
