#pragma once
/// \file
/// Conventions every writer follows so that no half-written output looks
/// complete: an existing output is replaced only when asked, and a new one
/// is built under a partial name beside it and renamed when complete.

#include <filesystem>
#include <functional>
#include <string>

namespace reachwise::io {

/// Throws InputError naming `path` when it exists and `overwrite` is false.
void refuseExisting(const std::filesystem::path& path, bool overwrite);

/// `.NAME.partial-PID` + `suffix` in the folder of `target` (NAME its file
/// name): where an output is built before it is renamed onto `target`.
/// Hidden, and unique per process.
std::filesystem::path partialPath(const std::filesystem::path& target, const std::string& suffix = "");

/// Calls `write` with a partial path beside `target` (partialPath with
/// `suffix`), then renames it onto `target`. On any failure the partial
/// file is removed and the error passed on; a failed rename is an
/// InputError naming `target`.
void writeThenRename(const std::filesystem::path& target, const std::string& suffix,
                     const std::function<void(const std::filesystem::path& partial)>& write);

}  // namespace reachwise::io
