# Installs the built reachwise into a scratch prefix, builds the examples
# against it as a separate project (find_package(reachwise)), and runs the
# example on the sample network.
#   cmake -DBUILD_DIR=... -DEXAMPLES=... -DSAMPLE=... -DWORK=... -DGENERATOR=... -P InstalledPackage.cmake
file(REMOVE_RECURSE ${WORK})
function(run_step what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE code OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT code EQUAL 0)
    message(FATAL_ERROR "${what} failed (${code}):\n${out}\n${err}")
  endif()
endfunction()
run_step("install" ${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${WORK}/prefix)
run_step("configure against the installed package"
         ${CMAKE_COMMAND} -S ${EXAMPLES} -B ${WORK}/build -G ${GENERATOR}
         -DCMAKE_BUILD_TYPE=Release -DCMAKE_PREFIX_PATH=${WORK}/prefix)
run_step("build" ${CMAKE_COMMAND} --build ${WORK}/build)
execute_process(COMMAND ${CMAKE_COMMAND} -DPROGRAM=${WORK}/build/route_sample -DSAMPLE=${SAMPLE}
                        -DWORK=${WORK}/run -P ${CMAKE_CURRENT_LIST_DIR}/RunExample.cmake
                RESULT_VARIABLE code)
if(NOT code EQUAL 0)
  message(FATAL_ERROR "the example built against the installed package did not route the sample")
endif()
