# qualify: builds and runs one consumer project (cmake -P), the check behind the packaging tests.
# SPDX-License-Identifier: MIT
#
# -DMODE=find_package|add_subdirectory -DQUALIFY_SOURCE_DIR=... -DQUALIFY_BINARY_DIR=...
# -DWORK_DIR=... -DGENERATOR=... -DCXX_COMPILER=...
foreach(var MODE QUALIFY_SOURCE_DIR QUALIFY_BINARY_DIR WORK_DIR GENERATOR CXX_COMPILER)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "run_consumer.cmake needs -D${var}=...")
  endif()
endforeach()

function(step what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${what} failed (${rc}):\n${out}\n${err}")
  endif()
  set(step_output "${out}" PARENT_SCOPE)
endfunction()

# A fresh work folder each run, so that files left by an earlier install cannot hide a gap.
file(REMOVE_RECURSE "${WORK_DIR}")
set(configure_args -S "${QUALIFY_SOURCE_DIR}/tests/cmake/${MODE}" -B "${WORK_DIR}/build"
    -G "${GENERATOR}" "-DCMAKE_CXX_COMPILER=${CXX_COMPILER}" -DCMAKE_BUILD_TYPE=Release)
if(MODE STREQUAL "find_package")
  step("installing qualify" "${CMAKE_COMMAND}" --install "${QUALIFY_BINARY_DIR}"
       --prefix "${WORK_DIR}/prefix")
  list(APPEND configure_args "-DCMAKE_PREFIX_PATH=${WORK_DIR}/prefix"
       "-DQUALIFY_EXPECTED_PREFIX=${WORK_DIR}/prefix" -DCMAKE_FIND_USE_PACKAGE_REGISTRY=OFF)
elseif(MODE STREQUAL "add_subdirectory")
  list(APPEND configure_args "-DQUALIFY_SOURCE_DIR=${QUALIFY_SOURCE_DIR}")
else()
  message(FATAL_ERROR "unknown MODE '${MODE}'")
endif()
step("configuring the consumer" "${CMAKE_COMMAND}" ${configure_args})
step("building the consumer" "${CMAKE_COMMAND}" --build "${WORK_DIR}/build")
step("running the consumer" "${WORK_DIR}/build/consumer")
if(NOT step_output STREQUAL "consumer: holds read\n")
  message(FATAL_ERROR "the consumer printed '${step_output}', expected 'consumer: holds read'")
endif()
message(STATUS "${MODE} consumer: ${step_output}")
