#include "reachwise/io/OutputFiles.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <system_error>

#include "reachwise/Error.hpp"

namespace reachwise::io {

void refuseExisting(const std::filesystem::path& path, bool overwrite) {
  std::error_code ec;
  if (overwrite || !std::filesystem::exists(path, ec)) return;
  InputLocation at;
  at.file = path.string();
  throw InputError(at, "the output exists; it is replaced only when overwriting is allowed");
}

std::filesystem::path partialPath(const std::filesystem::path& target, const std::string& suffix) {
  std::filesystem::path tmp = target;
  tmp.replace_filename(fmt::format(".{}.partial-{}{}", target.filename().string(), ::getpid(), suffix));
  return tmp;
}

void writeThenRename(const std::filesystem::path& target, const std::string& suffix,
                     const std::function<void(const std::filesystem::path& partial)>& write) {
  const auto tmp = partialPath(target, suffix);
  std::error_code ignored;
  std::filesystem::remove(tmp, ignored);
  try {
    write(tmp);
    std::filesystem::rename(tmp, target);
  } catch (const std::filesystem::filesystem_error& e) {
    std::filesystem::remove(tmp, ignored);
    InputLocation at;
    at.file = target.string();
    throw InputError(at, std::string("cannot put the output in place: ") + e.code().message());
  } catch (...) {
    std::filesystem::remove(tmp, ignored);
    throw;
  }
}

}  // namespace reachwise::io
