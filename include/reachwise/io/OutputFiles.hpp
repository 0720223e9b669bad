#pragma once
/// \file
/// Conventions every writer follows so that no half-written output looks
/// complete: an existing output is replaced only when asked, and a new one
/// is built under a partial name beside it and renamed when complete.

#include <filesystem>
#include <string>

namespace reachwise::io {

/// Throws InputError naming `path` when it exists and `overwrite` is false.
void refuseExisting(const std::filesystem::path& path, bool overwrite);

/// `.NAME.partial-PID` + `suffix` in the folder of `target` (NAME its file
/// name): where an output is built before it is renamed onto `target`.
/// Hidden, and unique per process.
std::filesystem::path partialPath(const std::filesystem::path& target, const std::string& suffix = "");

}  // namespace reachwise::io
