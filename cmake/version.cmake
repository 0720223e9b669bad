# Writes generated/reachwise/version.hpp with the current git hash. Run at
# every build (not only at configure time), so that outputs name the commit
# the program was really built from; configure_file leaves the header
# untouched when nothing changed, so nothing recompiles needlessly.
#   cmake -DSOURCE_DIR=... -DOUTPUT=... -DPROJECT_VERSION=... -P version.cmake
execute_process(COMMAND git rev-parse --short=12 HEAD
                WORKING_DIRECTORY ${SOURCE_DIR}
                OUTPUT_VARIABLE REACHWISE_GIT_HASH OUTPUT_STRIP_TRAILING_WHITESPACE
                ERROR_QUIET)
if(NOT REACHWISE_GIT_HASH)
  set(REACHWISE_GIT_HASH "unknown")
endif()
configure_file(${SOURCE_DIR}/cmake/version.hpp.in ${OUTPUT} @ONLY)
