#!/usr/bin/env bash
# Prints the path of a clang++ that links libFuzzer (-fsanitize=fuzzer), or
# nothing (exit 1) when there is none (Debian: clang libclang-rt-dev).
# Used by setup.sh --sanitize (one clang build for the sanitizer tests and
# the fuzz targets) and by fuzz.sh.
set -euo pipefail
probe="$(mktemp -d)"
trap 'rm -rf "$probe"' EXIT
printf '#include <cstddef>\n#include <cstdint>\nextern "C" int LLVMFuzzerTestOneInput(const std::uint8_t*, std::size_t) { return 0; }\n' \
  > "$probe/p.cpp"
for c in clang++ clang++-14; do
  if command -v "$c" >/dev/null && "$c" -fsanitize=fuzzer "$probe/p.cpp" -o "$probe/p" 2>/dev/null; then
    command -v "$c"
    exit 0
  fi
done
exit 1
