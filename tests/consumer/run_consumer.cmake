# Installs the build tree into a scratch prefix, configures and builds tests/consumer against it,
# and runs the example on a demo design. Any failure fails the test.
file(REMOVE_RECURSE ${WORK_DIR})
function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "command failed (${rc}): ${ARGN}\n${out}\n${err}")
  endif()
  set(LAST_OUTPUT "${out}" PARENT_SCOPE)
endfunction()
run(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${WORK_DIR}/prefix)
if(NOT EXISTS ${WORK_DIR}/prefix/bin/hallway)
  message(FATAL_ERROR "the executable was not installed")
endif()
# The same compiler and global flags as the build tree (a sanitizer build needs its runtime at link).
run(${CMAKE_COMMAND} -S ${SOURCE_DIR} -B ${WORK_DIR}/build -G Ninja -DCMAKE_BUILD_TYPE=Release
    -DCMAKE_PREFIX_PATH=${WORK_DIR}/prefix -DCMAKE_CXX_COMPILER=${CXX_COMPILER}
    "-DCMAKE_CXX_FLAGS=${CXX_FLAGS}" "-DCMAKE_EXE_LINKER_FLAGS=${LINKER_FLAGS}")
run(${CMAKE_COMMAND} --build ${WORK_DIR}/build)
run(${WORK_DIR}/build/depletion_table ${SOURCE_DIR}/../../designs/01_hallbar_qpc.yaml)
if(NOT LAST_OUTPUT MATCHES "depletion_voltage_V -0.314" OR NOT LAST_OUTPUT MATCHES "gap_nm Q 300.0")
  message(FATAL_ERROR "unexpected output from the consumer:\n${LAST_OUTPUT}")
endif()
message(STATUS "consumer output:\n${LAST_OUTPUT}")
