// Fuzz target: the NetCDF forcing reader (io/ForcingNetcdf.hpp): the file is
// opened as forcing, every series of every reach is read, and it is read
// again as observations.

#include <cstdint>
#include <vector>

#include "FuzzSupport.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"

namespace {

/// Axes longer than this are not read (memory, not correctness).
constexpr std::size_t kMaxReadSteps = 1000000;

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace reachwise;
  const fuzz::ScratchFile file(data, size, ".nc");
  fuzz::refusalIsFine([&] {
    const io::NetcdfForcingSource source(file.path());
    if (source.axis().steps > kMaxReadSteps) return;
    std::vector<double> buffer(source.axis().steps);
    for (const io::ForcingKind kind : {io::ForcingKind::Inflow, io::ForcingKind::Lateral})
      for (const std::string& id : source.ids(kind)) fuzz::refusalIsFine([&] { (void)source.fill(kind, id, buffer); });
  });
  fuzz::refusalIsFine([&] { (void)io::readObservedNetcdf(file.path()); });
  return 0;
}
