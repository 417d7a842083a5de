# Installs the build tree into a fresh prefix, then configures, builds and runs the consumer
# project against it. Run with:
#   cmake -DBUILD_DIR=... -DSOURCE_DIR=... -DWORK_DIR=... [-DCONFIG=Release] -P run_consumer_test.cmake
foreach(var BUILD_DIR SOURCE_DIR WORK_DIR)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "run_consumer_test.cmake: -D${var}=... is required")
  endif()
endforeach()
if(NOT CONFIG)
  set(CONFIG Release)
endif()

set(prefix ${WORK_DIR}/prefix)
set(consumer_build ${WORK_DIR}/build)
file(REMOVE_RECURSE ${WORK_DIR})
file(MAKE_DIRECTORY ${WORK_DIR})

function(step)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc WORKING_DIRECTORY ${WORK_DIR})
  if(NOT rc EQUAL 0)
    string(REPLACE ";" " " shown "${ARGN}")
    message(FATAL_ERROR "consumer test step failed (${rc}): ${shown}")
  endif()
endfunction()

step(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix} --config ${CONFIG})
step(${CMAKE_COMMAND} -S ${SOURCE_DIR} -B ${consumer_build}
     -DCMAKE_BUILD_TYPE=${CONFIG} -DCMAKE_PREFIX_PATH=${prefix})
step(${CMAKE_COMMAND} --build ${consumer_build} --config ${CONFIG})
if(EXISTS ${consumer_build}/consumer)
  step(${consumer_build}/consumer)
else()
  step(${consumer_build}/${CONFIG}/consumer)
endif()
