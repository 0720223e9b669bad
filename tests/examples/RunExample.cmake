# Runs the example program on the sample network and checks what it says:
# exit 0, one outlet peak line with a positive discharge, and the
# GeoPackage it names exists.
#   cmake -DPROGRAM=... -DSAMPLE=... -DWORK=... -P RunExample.cmake
file(REMOVE_RECURSE ${WORK})
file(MAKE_DIRECTORY ${WORK})
execute_process(COMMAND ${PROGRAM} ${SAMPLE} ${WORK}/example.gpkg
                RESULT_VARIABLE code OUTPUT_VARIABLE out ERROR_VARIABLE err)
if(NOT code EQUAL 0)
  message(FATAL_ERROR "example exited with ${code}\n${out}\n${err}")
endif()
if(NOT out MATCHES "outlet [^:]+: peak [0-9]*[1-9][0-9.]* m3/s")
  message(FATAL_ERROR "no outlet peak in the example's output:\n${out}")
endif()
if(NOT EXISTS ${WORK}/example.gpkg)
  message(FATAL_ERROR "the example did not write ${WORK}/example.gpkg")
endif()
message(STATUS "${out}")
