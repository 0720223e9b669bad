#include "reachwise/io/OutputFiles.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <stdio.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <fstream>
#include <iterator>
#include <optional>
#include <set>
#include <sstream>
#include <system_error>

#include "reachwise/Error.hpp"

namespace reachwise::io {

namespace fs = std::filesystem;

namespace {

[[noreturn]] void failAt(const fs::path& path, const std::string& message) {
  InputLocation at;
  at.file = path.string();
  throw InputError(at, message);
}

bool present(const fs::path& p) {
  std::error_code ec;
  return fs::exists(fs::symlink_status(p, ec));
}

/// Absolute, `.`/`..` removed, symbolic links in the existing part resolved.
fs::path normalised(const fs::path& p) {
  std::error_code ec;
  fs::path abs = fs::absolute(p, ec);
  if (ec) abs = p;
  fs::path canon = fs::weakly_canonical(abs, ec);
  return (ec ? abs : canon).lexically_normal();
}

/// `inner` is `outer` or lies below it (both normalised).
bool inside(const fs::path& inner, const fs::path& outer) {
  auto i = inner.begin();
  for (auto o = outer.begin(); o != outer.end(); ++o, ++i) {
    if (o->empty() && std::next(o) == outer.end()) break;  // a trailing separator
    if (i == inner.end() || *i != *o) return false;
  }
  return true;
}

fs::path folderOf(const fs::path& target) {
  const fs::path parent = fs::path(target).parent_path();
  return parent.empty() ? fs::path(".") : parent;
}

}  // namespace

[[noreturn]] void throwSystemError(const fs::path& path, const std::string& what, int error) {
  failAt(path, what + ": " + std::generic_category().message(error));
}

void refuseExisting(const fs::path& path, bool overwrite) {
  if (overwrite || !present(path)) return;
  failAt(path, "the output exists; it is replaced only when overwriting is allowed");
}

void requireParentFolder(const fs::path& path) {
  const fs::path folder = folderOf(path);
  std::error_code ec;
  const auto st = fs::status(folder, ec);
  if (!fs::exists(st))
    failAt(path, fmt::format("the folder {} does not exist; create it first or choose another output",
                             folder.string()));
  if (!fs::is_directory(st)) failAt(path, fmt::format("{} is not a folder", folder.string()));
}

fs::path partialPath(const fs::path& target, const std::string& suffix) {
  fs::path tmp = target;
  tmp.replace_filename(fmt::format(".{}.partial-{}{}", target.filename().string(), ::getpid(), suffix));
  return tmp;
}

bool samePath(const fs::path& a, const fs::path& b) {
  std::error_code ec;
  if (fs::exists(a, ec) && fs::exists(b, ec)) {
    const bool same = fs::equivalent(a, b, ec);
    if (!ec) return same;
  }
  return normalised(a) == normalised(b);
}

void refuseOutputOverInput(const std::vector<NamedPath>& outputs, const std::vector<NamedPath>& inputs) {
  const auto clash = [](const NamedPath& out, const fs::path& written, const NamedPath& other, bool is_input) {
    failAt(written, fmt::format("{} {} would replace the {} {} ({}); an output never replaces {}, even with "
                                "--overwrite: choose another output",
                                out.option, out.path.string(), is_input ? "input" : "output", other.option,
                                other.path.string(), is_input ? "an input" : "another output"));
  };
  // The files each output writes: itself, or the named files in its folder.
  const auto written = [](const NamedPath& out) {
    std::vector<fs::path> files;
    if (!out.folder) files.push_back(out.path);
    for (const std::string& name : out.names) files.push_back(out.path / name);
    return files;
  };
  for (std::size_t k = 0; k < outputs.size(); ++k) {
    const NamedPath& out = outputs[k];
    if (out.path.empty()) continue;
    for (const NamedPath& in : inputs) {
      if (in.path.empty()) continue;
      if (out.folder && out.names.empty()) {  // replaced whole: nothing read may lie in it
        if (samePath(out.path, in.path) || inside(normalised(in.path), normalised(out.path)))
          clash(out, out.path, in, true);
        continue;
      }
      for (const fs::path& file : written(out))
        if (samePath(file, in.path)) clash(out, file, in, true);
    }
    for (std::size_t j = 0; j < k; ++j) {
      const NamedPath& other = outputs[j];
      if (other.path.empty()) continue;
      // A folder replaced whole holds no other output (it may lie in a
      // CSV folder: `--csv OUT --report OUT/report`).
      const auto within = [](const NamedPath& whole, const NamedPath& part) {
        return whole.folder && whole.names.empty() && inside(normalised(part.path), normalised(whole.path));
      };
      if (within(out, other) || within(other, out)) clash(out, out.path, other, false);
      for (const fs::path& a : written(out))
        for (const fs::path& b : written(other))
          if (samePath(a, b)) clash(out, a, other, false);
    }
  }
}

// ---------------------------------------------------------------------------
// OutputCommit

namespace {

constexpr const char* kJournalPrefix = ".reachwise-commit-";

/// An exclusive flock(2) on a folder, held while outputs are put in place
/// there; every reachwise commit takes it, so commits into one folder never
/// interleave (local file systems).
class FolderLock {
public:
  explicit FolderLock(const fs::path& folder) : folder_(folder) {
    fd_ = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (fd_ < 0) throwSystemError(folder, "cannot open the output folder", errno);
    while (::flock(fd_, LOCK_EX) != 0) {
      const int e = errno;
      if (e == EINTR) continue;
      // A file system without locks (some network mounts): the renames
      // still never replace without overwriting, but two runs' commits
      // are not kept apart there.
      if (e == ENOLCK || e == EOPNOTSUPP || e == EINVAL) break;
      ::close(fd_);
      throwSystemError(folder, "cannot lock the output folder", e);
    }
  }
  ~FolderLock() {
    if (fd_ >= 0) ::close(fd_);  // closing releases the lock
  }
  FolderLock(const FolderLock&) = delete;
  FolderLock& operator=(const FolderLock&) = delete;
  void sync() const { ::fsync(fd_); }

private:
  fs::path folder_;
  int fd_ = -1;
};

/// fsync(2) of a file, or of a folder and everything in it.
void syncTree(const fs::path& p) {
  std::error_code ec;
  if (fs::is_directory(fs::symlink_status(p, ec))) {
    for (const auto& e : fs::directory_iterator(p, ec)) syncTree(e.path());
  }
  const int fd = ::open(p.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return;
  ::fsync(fd);
  ::close(fd);
}

/// rename(2) that never replaces: renameat2 with RENAME_NOREPLACE, else
/// (a file system without it) link(2) then unlink(2) for a file, or a
/// check then rename for a folder (under the folder lock). 0 or an errno.
int renameNoReplace(const fs::path& from, const fs::path& to) {
#ifdef RENAME_NOREPLACE
  if (::renameat2(AT_FDCWD, from.c_str(), AT_FDCWD, to.c_str(), RENAME_NOREPLACE) == 0) return 0;
  const int e = errno;
  if (e != EINVAL && e != ENOSYS && e != ENOTSUP) return e;
#endif
  struct stat st {};
  if (::lstat(from.c_str(), &st) != 0) return errno;
  if (!S_ISDIR(st.st_mode)) {
    if (::link(from.c_str(), to.c_str()) != 0) return errno;
    ::unlink(from.c_str());
    return 0;
  }
  if (present(to)) return EEXIST;
  return ::rename(from.c_str(), to.c_str()) == 0 ? 0 : errno;
}

int renamePlain(const fs::path& from, const fs::path& to) {
  return ::rename(from.c_str(), to.c_str()) == 0 ? 0 : errno;
}

void removeQuietly(const fs::path& p) {
  std::error_code ec;
  fs::remove_all(p, ec);
}

/// What a path is now: `device:inode:mtime` (lstat), or `-` when absent.
std::string identity(const fs::path& p) {
  struct stat st {};
  if (::lstat(p.c_str(), &st) != 0) return "-";
  return fmt::format("{}:{}:{}.{}", st.st_dev, st.st_ino, st.st_mtim.tv_sec, st.st_mtim.tv_nsec);
}

/// A journal: NUL-separated fields, four per entry (staged, target, old,
/// and the target's identity() when the journal was written), then one
/// field per journal copy after an empty field.
struct Journal {
  struct Line {
    fs::path staged, target, backup;
    std::string before;
  };
  std::vector<Line> lines;
  std::vector<fs::path> copies;
};

std::string encode(const Journal& j) {
  std::string s;
  for (const auto& l : j.lines) {
    for (const fs::path* p : {&l.staged, &l.target, &l.backup}) s += p->string() + '\0';
    s += l.before + '\0';
  }
  s += '\0';
  for (const auto& c : j.copies) s += c.string() + '\0';
  return s;
}

std::optional<Journal> decode(const std::string& s) {
  Journal j;
  std::vector<std::string> fields;
  std::size_t at = 0;
  bool copies = false;
  std::vector<std::string> entry;
  while (at < s.size()) {
    const std::size_t end = s.find('\0', at);
    if (end == std::string::npos) return std::nullopt;
    const std::string field = s.substr(at, end - at);
    at = end + 1;
    if (field.empty() && !copies) {
      copies = true;
      continue;
    }
    if (copies) {
      j.copies.emplace_back(field);
      continue;
    }
    entry.push_back(field);
    if (entry.size() == 4) {
      j.lines.push_back({entry[0], entry[1], entry[2], entry[3]});
      entry.clear();
    }
  }
  if (!entry.empty() || !copies) return std::nullopt;
  return j;
}

/// Writes `content` to `path` through a temporary name; fsynced.
void writeDurably(const fs::path& path, const std::string& content) {
  const fs::path tmp = path.string() + ".tmp";
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) throwSystemError(path, "cannot write the commit journal", errno);
  std::size_t done = 0;
  while (done < content.size()) {
    const ssize_t n = ::write(fd, content.data() + done, content.size() - done);
    if (n < 0) {
      const int e = errno;
      if (e == EINTR) continue;
      ::close(fd);
      ::unlink(tmp.c_str());
      throwSystemError(path, "cannot write the commit journal", e);
    }
    done += static_cast<std::size_t>(n);
  }
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    throwSystemError(path, "cannot write the commit journal", e);
  }
  if (::rename(tmp.c_str(), path.c_str()) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    throwSystemError(path, "cannot write the commit journal", e);
  }
}

/// Rolls one journal forward: every staged output still there goes onto
/// its target (the old one moved aside first), then the old ones and the
/// journal's copies are removed. A target that changed since the journal
/// was written (another program wrote it) is left alone and the staged
/// output dropped.
std::string rollForward(const fs::path& file, const Journal& j) {
  std::vector<std::string> placed, changed;
  for (const auto& l : j.lines) {
    if (!present(l.staged)) continue;
    const bool as_before = identity(l.target) == l.before ||
                           (!present(l.target) && identity(l.backup) == l.before);
    if (!as_before) {
      changed.push_back(l.target.string());
      removeQuietly(l.staged);
      continue;
    }
    if (present(l.target) && !present(l.backup)) renamePlain(l.target, l.backup);
    if (renamePlain(l.staged, l.target) == 0) placed.push_back(l.target.string());
  }
  for (const auto& l : j.lines) removeQuietly(l.backup);
  for (const auto& c : j.copies) removeQuietly(c);
  removeQuietly(file);
  if (!changed.empty())
    return fmt::format("warning: an interrupted run's outputs were not all put in place ({}); changed since by "
                       "another program, left as they are: {}",
                       file.string(), fmt::join(changed, ", "));
  return placed.empty()
             ? fmt::format("note: removed the journal {} of an interrupted run whose outputs were all in place",
                           file.string())
             : fmt::format("note: finished putting in place the outputs of an interrupted run ({}): {}",
                           file.string(), fmt::join(placed, ", "));
}

}  // namespace

std::vector<std::string> recoverCommits(const fs::path& folder) {
  std::vector<std::string> notes;
  std::error_code ec;
  std::vector<fs::path> journals;
  for (const auto& e : fs::directory_iterator(folder, ec)) {
    const std::string name = e.path().filename().string();
    if (name.rfind(kJournalPrefix, 0) != 0) continue;
    if (name.size() > 4 && name.compare(name.size() - 4, 4, ".tmp") == 0) {
      removeQuietly(e.path());  // a journal never finished: its run renamed nothing
      continue;
    }
    journals.push_back(e.path());
  }
  for (const fs::path& file : journals) {
    std::ifstream in(file, std::ios::binary);
    const std::string content((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const auto journal = decode(content);
    if (!journal) {
      notes.push_back(fmt::format("warning: {} is not a readable commit journal; left as it is", file.string()));
      continue;
    }
    notes.push_back(rollForward(file, *journal));
  }
  return notes;
}

OutputCommit::OutputCommit(bool overwrite) : overwrite_(overwrite) {}

OutputCommit::~OutputCommit() {
  if (committed_) return;
  for (const auto& e : entries_) removeQuietly(e.staged);
}

void OutputCommit::add(fs::path staged, fs::path target) {
  REACHWISE_ASSERT(!committed_);
  Entry e;
  e.staged = std::move(staged);
  e.target = std::move(target);
  e.backup = partialPath(e.target, ".old");
  entries_.push_back(std::move(e));
}

void OutputCommit::addFinal(std::function<void()> action) { finals_.push_back(std::move(action)); }

void OutputCommit::undo() {
  for (auto e = entries_.rbegin(); e != entries_.rend(); ++e) {
    if (e->placed && renamePlain(e->target, e->staged) == 0) e->placed = false;
    if (e->moved_old && !present(e->target) && renamePlain(e->backup, e->target) == 0) e->moved_old = false;
  }
}

void OutputCommit::commit() {
  REACHWISE_ASSERT(!committed_);
  // The folders, each locked once, in one order (no two commits deadlock).
  std::set<fs::path> folders;
  for (const auto& e : entries_) folders.insert(normalised(folderOf(e.target)));
  std::vector<std::unique_ptr<FolderLock>> locks;
  for (const auto& f : folders) locks.push_back(std::make_unique<FolderLock>(f));
  for (const auto& f : folders)
    for (auto& note : recoverCommits(f)) notes_.push_back(std::move(note));

  for (const auto& e : entries_) {
    if (!present(e.staged)) failAt(e.target, "the finished output " + e.staged.string() + " has gone");
    if (!overwrite_ && present(e.target))
      failAt(e.target, "the output appeared while this run was writing (another run?); it is replaced only "
                       "when overwriting is allowed");
    syncTree(e.staged);
  }

  // The journal, one copy in each folder: from here on the next commit in
  // any of these folders finishes the set if this process dies.
  Journal journal;
  for (const auto& e : entries_)
    journal.lines.push_back({normalised(e.staged), normalised(e.target), normalised(e.backup), identity(e.target)});
  const std::string name = fmt::format("{}{}", kJournalPrefix, ::getpid());
  for (const auto& f : folders) journal.copies.push_back(f / name);
  const std::string content = encode(journal);
  std::vector<fs::path> written;
  const auto dropJournals = [&] {
    for (const auto& c : written) removeQuietly(c);
  };
  try {
    for (const auto& c : journal.copies) {
      writeDurably(c, content);
      written.push_back(c);
    }
    for (const auto& l : locks) l->sync();

    for (auto& e : entries_) {
      if (present(e.target)) {
        if (!overwrite_)
          failAt(e.target, "the output appeared while this run was writing (another run?); it is replaced only "
                           "when overwriting is allowed");
        removeQuietly(e.backup);
        if (const int err = renamePlain(e.target, e.backup))
          throwSystemError(e.target, "cannot move the old output aside", err);
        e.moved_old = true;
      }
      if (const int err = renameNoReplace(e.staged, e.target))
        throwSystemError(e.target, err == EEXIST ? "the output appeared while this run was writing (another run?); "
                                                   "not replaced"
                                                 : "cannot put the output in place",
                         err);
      e.placed = true;
    }
    for (const auto& action : finals_) action();
  } catch (...) {
    dropJournals();
    undo();
    throw;
  }
  committed_ = true;
  for (const auto& e : entries_) removeQuietly(e.backup);
  dropJournals();
  for (const auto& l : locks) l->sync();
}

void writeStaged(const fs::path& target, const std::string& suffix,
                 const std::function<void(const fs::path& partial)>& write, OutputCommit& into) {
  requireParentFolder(target);
  const auto tmp = partialPath(target, suffix);
  removeQuietly(tmp);
  try {
    write(tmp);
  } catch (...) {
    removeQuietly(tmp);
    throw;
  }
  into.add(tmp, target);
}

void writeThenRename(const fs::path& target, const std::string& suffix,
                     const std::function<void(const fs::path& partial)>& write, bool overwrite) {
  OutputCommit commit(overwrite);
  writeStaged(target, suffix, write, commit);
  commit.commit();
}

}  // namespace reachwise::io
