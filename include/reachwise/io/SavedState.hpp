#pragma once
/// \file
/// The saved state of a run (`route --save-state FILE`), read back by a
/// later run (`--initial-state FILE`) to continue from it: every reach's
/// section flows and numerics and every lake's storage at the run's end
/// time, in a CF-NetCDF file (docs/formats.md, "Saved state").

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

#include "reachwise/routing/ReachRouter.hpp"

namespace reachwise::io {

class OutputCommit;

/// The `reachwise_state_version` this program writes and reads.
inline constexpr int kStateFormatVersion = 1;

/// One lake's state at the end time.
struct LakeState {
  std::string lake_id;
  double storage_m3 = 0;
  double level_m = 0;          ///< informative: the level of that storage
  std::uint32_t substeps = 0;  ///< the level-pool sub-steps per step of the run
};

struct SavedState {
  std::string method;        ///< the run's method name (`vpmc`, `mc`, `muskingum`)
  double time_unix_s = 0;    ///< the end time: seconds since 1970-01-01T00:00:00Z
  int utc_offset_min = 0;    ///< the offset the run's input used (for the ISO text)
  double dt_s = 0;           ///< the run's time step
  std::vector<std::string> reach_ids;          ///< one per reach, in plan order
  std::vector<routing::ReachState> reaches;    ///< likewise
  std::vector<LakeState> lakes;                ///< in the lakes layer's order
};

struct StateFileOptions {
  std::string source;   ///< program and version
  std::string history;  ///< how the run was asked for
};

/// Writes `state` under a partial name beside `target` and hands it to
/// `into` (all outputs of a run appear together). InputError naming the
/// file when it cannot be written.
void writeStateFile(const std::filesystem::path& target, const SavedState& state, const StateFileOptions& options,
                    OutputCommit& into);

/// Reads a state file, checking everything a run relies on: the format
/// version, the variables' types and shapes (sizes from their own
/// dimensions), every value finite and in range, the reach and lake ids
/// present, not empty and unique, each reach's flow count. InputError
/// naming the file, the variable (field) and the reach or lake otherwise.
SavedState readStateFile(const std::filesystem::path& path);

}  // namespace reachwise::io
