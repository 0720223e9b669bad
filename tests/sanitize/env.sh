# Sanitizer options for the Asan build and the fuzz targets (docs/testing.md):
#   source tests/sanitize/env.sh
# Every report ends the process with SIGABRT, so a sanitized program can
# never pass for one that failed on purpose (a CLI test expecting exit 1
# sees no normal exit at all); leaks are checked at exit, with the
# suppressions of lsan.supp (system libraries only).
sanitize_dir="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
export ASAN_OPTIONS="abort_on_error=1:detect_leaks=1:check_initialization_order=1:strict_init_order=1"
export UBSAN_OPTIONS="abort_on_error=1:halt_on_error=1:print_stacktrace=1"
export LSAN_OPTIONS="suppressions=$sanitize_dir/lsan.supp:print_suppressions=0"
unset sanitize_dir
