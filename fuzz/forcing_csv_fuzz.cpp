// Fuzz target: the CSV forcing reader (io/ForcingCsv.hpp), as forcing and as
// observations, and the run's time axis built from what it accepts
// (io/ForcingAxis.hpp).

#include <cstdint>

#include "FuzzSupport.hpp"
#include "reachwise/io/ForcingAxis.hpp"
#include "reachwise/io/ForcingCsv.hpp"

namespace {

/// Axes longer than this are not filled: the memory they would take is
/// not what this target looks for (a run's step limit is checked elsewhere).
constexpr std::size_t kMaxFilledSteps = 100000;

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace reachwise;
  const fuzz::ScratchFile file(data, size, ".csv");
  fuzz::refusalIsFine([&] {
    const io::CsvForcingFile raw = io::readForcingCsvFile(file.path(), units::System::SI, io::CsvValues::Forcing);
    const routing::TimeAxis axis = io::chooseForcingAxis(&raw, nullptr, {});
    if (axis.steps <= kMaxFilledSteps) (void)io::buildForcing(&raw, nullptr, {});
  });
  fuzz::refusalIsFine([&] {
    (void)io::readForcingCsvFile(file.path(), units::System::USCustomary, io::CsvValues::Observed);
  });
  return 0;
}
