#pragma once
// Shared by the fuzz targets (docs/testing.md, "Fuzzing"): what counts as a
// correct refusal of an input, and a scratch file for readers that take a
// path.

#include <unistd.h>

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <filesystem>
#include <fstream>
#include <functional>
#include <new>
#include <string>
#include <system_error>

#include "reachwise/Error.hpp"

namespace reachwise::fuzz {

/// Runs `body`. An input refused with a reachwise error (InputError,
/// InvalidParameter, …) is a correct outcome; anything else the program
/// would report as "internal error (please report)" (InternalError, a bare
/// std::exception) is a finding: it aborts so that libFuzzer keeps the
/// input. Out-of-memory is left to libFuzzer's -rss_limit_mb/-malloc_limit_mb.
inline void refusalIsFine(const std::function<void()>& body) {
  try {
    body();
  } catch (const InternalError& e) {
    std::fprintf(stderr, "fuzz: internal error: %s\n", e.what());
    std::abort();
  } catch (const Error&) {
    // refused with a message naming the input: fine
  } catch (const std::bad_alloc&) {
    // the program reports this as "out of memory" (exit 1)
  } catch (const std::exception& e) {
    std::fprintf(stderr, "fuzz: unexpected exception: %s\n", e.what());
    std::abort();
  }
}

/// A file holding the fuzzer's bytes, removed (with any `-journal`/`-wal`/
/// `-shm` beside it) when destroyed. Named `reachwise-fuzz-input<suffix>` in
/// the working folder (scripts/fuzz.sh runs each target in its own), so
/// the name, which reaches messages and the comparisons the fuzzer learns
/// from, is the same in every run and a run with a fixed seed repeats;
/// with REACHWISE_FUZZ_UNIQUE set (several processes of one target in one
/// folder), `reachwise-fuzz-PID<suffix>` in the temporary folder.
class ScratchFile {
public:
  ScratchFile(const std::uint8_t* data, std::size_t size, const std::string& suffix)
      : path_(std::getenv("REACHWISE_FUZZ_UNIQUE")
                  ? std::filesystem::temp_directory_path() / ("reachwise-fuzz-" + std::to_string(::getpid()) + suffix)
                  : std::filesystem::path("reachwise-fuzz-input" + suffix)) {
    std::ofstream out(path_, std::ios::binary | std::ios::trunc);
    out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
    if (!out) {
      std::fprintf(stderr, "fuzz: cannot write %s\n", path_.c_str());
      std::abort();
    }
  }
  ~ScratchFile() {
    std::error_code ec;
    for (const char* extra : {"", "-journal", "-wal", "-shm"})
      std::filesystem::remove(path_.string() + extra, ec);
  }
  ScratchFile(const ScratchFile&) = delete;
  ScratchFile& operator=(const ScratchFile&) = delete;

  const std::filesystem::path& path() const { return path_; }

private:
  std::filesystem::path path_;
};

}  // namespace reachwise::fuzz
