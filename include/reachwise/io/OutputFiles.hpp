#pragma once
/// \file
/// Conventions every writer follows so that no half-written output looks
/// complete: an existing output is replaced only when asked, an output never
/// replaces an input, a new one is built under a partial name beside it, and
/// the outputs of one run are put in place together (OutputCommit).

#include <filesystem>
#include <functional>
#include <memory>
#include <string>
#include <vector>

namespace reachwise::io {

/// Throws InputError naming `path` when it exists and `overwrite` is false.
void refuseExisting(const std::filesystem::path& path, bool overwrite);

/// Throws InputError naming `path` when the folder it would be written in
/// does not exist ("the folder ... does not exist"), or is not a folder.
void requireParentFolder(const std::filesystem::path& path);

/// `.NAME.partial-PID` + `suffix` in the folder of `target` (NAME its file
/// name): where an output is built before it is renamed onto `target`.
/// Hidden, and unique per process.
std::filesystem::path partialPath(const std::filesystem::path& target, const std::string& suffix = "");

/// True when `a` and `b` name the same file: the same inode when both exist
/// (std::filesystem::equivalent, so links and `./x` vs `x` are caught),
/// else the same normalised absolute path (symbolic links in the existing
/// part resolved).
bool samePath(const std::filesystem::path& a, const std::filesystem::path& b);

/// One path a command reads or writes, with the option that named it
/// (`--out`, `NETWORK`, ...), for the messages.
struct NamedPath {
  std::string option;
  std::filesystem::path path;
  /// An output folder: the files `names` in it (empty: the whole folder,
  /// which is replaced with everything in it).
  bool folder = false;
  std::vector<std::string> names = {};
};

/// Throws InputError naming both paths when an output is an input (or,
/// for a folder output, would replace or remove one), or when two outputs
/// are the same file. Empty paths are skipped. Called before any work.
void refuseOutputOverInput(const std::vector<NamedPath>& outputs, const std::vector<NamedPath>& inputs);

/// Puts the outputs of one run in place together (docs/formats.md,
/// "Outputs", "Putting the outputs in place"). Writers build their outputs
/// under temporary names and hand them over with add(); commit() renames
/// them all under a lock on their folders, with a journal that lets the next
/// commit in those folders finish the set after a kill; any failure before
/// the last rename puts every old output back. A commit destroyed without
/// commit() removes what was handed to it.
class OutputCommit {
public:
  explicit OutputCommit(bool overwrite);
  ~OutputCommit();
  OutputCommit(const OutputCommit&) = delete;
  OutputCommit& operator=(const OutputCommit&) = delete;

  /// `staged` (a complete file or folder beside `target`, same folder) is to
  /// become `target`. From now on the commit owns `staged`.
  void add(std::filesystem::path staged, std::filesystem::path target);

  /// Run after every rename succeeded, before the old outputs are deleted;
  /// when it throws, every rename is undone (used to commit a write-back
  /// transaction last).
  void addFinal(std::function<void()> action);

  /// Renames every staged output onto its target. Throws InputError naming
  /// the output (with the system's reason) and leaves the old outputs when
  /// any step fails; without `overwrite`, a target that appeared since the
  /// run started (another run) is refused and left as it is.
  void commit();

  /// How many unfinished commits of killed runs commit() finished (see the
  /// notes it returns through recoveredNotes()).
  const std::vector<std::string>& recoveredNotes() const noexcept { return notes_; }

private:
  struct Entry {
    std::filesystem::path staged, target, backup;
    bool moved_old = false, placed = false;
  };
  void undo();
  bool overwrite_;
  bool committed_ = false;
  std::vector<Entry> entries_;
  std::vector<std::function<void()>> finals_;
  std::vector<std::string> notes_;
};

/// Finishes (rolls forward) the commit journals that killed runs left in
/// `folder`; the caller must hold the folder's lock (OutputCommit does).
/// Returns one note per journal finished.
std::vector<std::string> recoverCommits(const std::filesystem::path& folder);

/// Calls `write` with a partial path beside `target` (partialPath with
/// `suffix`), then renames it onto `target` (through an OutputCommit: locked,
/// not replacing an existing file unless `overwrite`). On any failure the
/// partial file is removed and the error passed on; a failed rename is an
/// InputError naming `target`.
void writeThenRename(const std::filesystem::path& target, const std::string& suffix,
                     const std::function<void(const std::filesystem::path& partial)>& write,
                     bool overwrite = true);

/// Like writeThenRename, but hands the finished partial file to `into`
/// instead of renaming it.
void writeStaged(const std::filesystem::path& target, const std::string& suffix,
                 const std::function<void(const std::filesystem::path& partial)>& write, OutputCommit& into);

/// The message for a failed system call on `path`: `what` and the reason of
/// `error` (an errno value captured right after the call).
[[noreturn]] void throwSystemError(const std::filesystem::path& path, const std::string& what, int error);

}  // namespace reachwise::io
