#!/usr/bin/env bash
# Builds the libFuzzer targets of fuzz/ with clang (ASan + UBSan, build folder
# build-fuzz) and runs each for a while from its seed corpus; first it
# replays the committed regression inputs (fuzz/regressions/TARGET/).
#   scripts/fuzz.sh [SECONDS] [TARGET...]   default: 60 s, every target
#   FUZZ_BUILD_DIR=...                      build folder (default build-fuzz)
#   FUZZ_JOBS=N                             N fuzzing processes per target (default 1)
#   FUZZ_PARALLEL=N                         N targets at a time (default: one per core)
#   FUZZ_SEED=N                             libFuzzer's seed (default 0: a new one each run;
#                                           scripts/test.sh --sanitize uses 1, so that CI is repeatable)
#   FUZZ_RUNS="TARGET=N ..."                stop TARGET after N inputs (SECONDS still caps it;
#                                           scripts/test.sh sets these)
# A finding in a known library fault (fuzz/pending/known-faults.tsv) is
# reported as such and does not fail the run.
# Without clang and libFuzzer (Debian: clang libclang-rt-dev) it says so
# and does nothing. A finding is kept in BUILD/fuzz-findings/TARGET/ and
# the script exits 1 (docs/testing.md, "Fuzzing").
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${FUZZ_BUILD_DIR:-$here/build-fuzz}"
mkdir -p "$build"
build="$(cd "$build" && pwd)"   # the fuzzers run inside their findings folders
seconds="${1:-60}"
shift || true
targets=("$@")
if ((${#targets[@]} == 0)); then targets=(iso_time run_file forcing_csv forcing_netcdf network_gpkg); fi

if ! cxx="$("$here/scripts/libfuzzer-clang.sh")"; then
  echo "fuzz: no clang with libFuzzer (Debian: apt-get install clang libclang-rt-dev); fuzz targets skipped"
  exit 0
fi
cc="${cxx/clang++/clang}"

# A build folder that already has the fuzz targets (the sanitizer build of
# setup.sh --sanitize, which also holds the tests) is used as it is.
if ! grep -qs '^REACHWISE_FUZZ:BOOL=ON' "$build/CMakeCache.txt"; then
  cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=Asan -DCMAKE_CXX_COMPILER="$cxx" -DCMAKE_C_COMPILER="$cc" \
  -DREACHWISE_FUZZ=ON -DREACHWISE_BUILD_TESTS=OFF -DREACHWISE_BUILD_BENCH=OFF -DREACHWISE_BUILD_EXAMPLES=OFF >/dev/null
fi
cmake --build "$build" --parallel "$(nproc)" --target $(printf 'fuzz_%s ' "${targets[@]}")

source "$here/tests/sanitize/env.sh"
cat "$here/tests/sanitize/lsan.supp" "$here/fuzz/lsan.supp" > "$build/lsan.supp"
export LSAN_OPTIONS="suppressions=$build/lsan.supp:print_suppressions=0"
# An allocation above 1 GB fails (malloc returns null, new throws
# std::bad_alloc) as it would under a memory limit, instead of ending the
# run: netCDF-C asks for gigabytes when a damaged classic header says so and
# reports NC_ENOMEM when refused, as the program then does (exit 1).
export ASAN_OPTIONS="$ASAN_OPTIONS:allocator_may_return_null=1:max_allocation_size_mb=1024"

# The known library fault (fuzz/pending/known-faults.tsv) of target $1 that
# the sanitizer report in log $2 shows among its first five frames: prints
# its function and returns 0, or returns 1.
known_fault() {
  local target function input
  while IFS=$'\t' read -r target function input; do
    [[ -z $target || $target == \#* || $target != "$1" ]] && continue
    if grep -m1 -A6 -E '^==[0-9]+==ERROR: ' "$2" | grep -qE "#[0-4] .* in $function "; then
      echo "$function in a library, input like $input"
      return 0
    fi
  done <"$here/fuzz/pending/known-faults.tsv"
  return 1
}

# One target: replay its regression inputs, then fuzz from its corpus.
# Prints its lines at the end (targets run side by side); status 1 on a finding.
fuzz_one() {
  local t="$1"
  local exe="$build/fuzz/fuzz_$t"
  local findings="$build/fuzz-findings/$t"
  local work="$build/fuzz-corpus/$t"          # the seeds plus what the fuzzer adds; the tree stays as committed
  mkdir -p "$findings" "$work"
  local seeds=("$here/fuzz/corpus/$t/"*)
  if [[ $t == network_gpkg ]]; then seeds+=("$here"/sample-network/*.gpkg); fi
  local f
  for f in "${seeds[@]}"; do
    if [[ ! -e "$work/$(basename "$f")" ]]; then cp "$f" "$work/"; fi
  done
  local regressions=("$here/fuzz/regressions/$t/"*)
  if [[ -e ${regressions[0]} ]]; then
    echo "fuzz: $t: replayed ${#regressions[@]} regression input(s)"
    if ! (cd "$findings" && "$exe" -rss_limit_mb=2048 -timeout=30 "${regressions[@]}" >"$findings/regressions.log" 2>&1); then
      echo "fuzz: $t: a regression input fails (log: $findings/regressions.log)"
      return 1
    fi
  fi
  echo "fuzz: $t: ${seconds} s from $(ls "$work" | wc -l) inputs"
  local jobs=() runs=()
  if ((${FUZZ_JOBS:-1} > 1)); then  # logs: $findings/fuzz-N.log; each process its own scratch file
    jobs=(-jobs="$FUZZ_JOBS" -workers="$FUZZ_JOBS")
    export REACHWISE_FUZZ_UNIQUE=1
  fi
  local pair
  for pair in ${FUZZ_RUNS:-}; do
    if [[ ${pair%%=*} == "$t" ]]; then runs=(-runs="${pair#*=}"); fi
  done
  if ! (cd "$findings" && "$exe" -max_total_time="$seconds" -timeout=30 -rss_limit_mb=2048 -print_final_stats=1 \
        -seed="${FUZZ_SEED:-0}" "${jobs[@]}" "${runs[@]}" -artifact_prefix="$findings/" "$work" >"$findings/run.log" 2>&1); then
    local known
    if known="$(known_fault "$t" "$findings/run.log")"; then
      echo "fuzz: $t: stopped at a known library fault ($known; fuzz/pending/README.md), not counted as a finding"
      return 0
    fi
    echo "fuzz: $t: finding in $findings/ (log: $findings/run.log)"
    return 1
  fi
  grep -E "^stat::number_of_executed_units|^stat::peak_rss_mb" "$findings/run.log" | tr '\n' ' ' | sed "s/^/fuzz: $t: /"
  echo
}

# Targets run side by side, FUZZ_PARALLEL at a time (default: one per core),
# each with its own output file, printed when it ends.
parallel="${FUZZ_PARALLEL:-$(nproc)}"
out="$build/fuzz-findings"
mkdir -p "$out"
failed=()
pids=()
names=()
finish_one() {  # waits for the oldest running target
  if ! wait "${pids[0]}"; then failed+=("${names[0]}"); fi
  cat "$out/${names[0]}.out"
  pids=("${pids[@]:1}")
  names=("${names[@]:1}")
}
for t in "${targets[@]}"; do
  if ((${#pids[@]} >= parallel)); then finish_one; fi
  fuzz_one "$t" >"$out/$t.out" 2>&1 &
  pids+=($!)
  names+=("$t")
done
while ((${#pids[@]})); do finish_one; done
if ((${#failed[@]})); then
  echo "fuzz: findings: ${failed[*]}"
  exit 1
fi
echo "fuzz: no finding"
