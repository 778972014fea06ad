# Post-install consumer check, run by CTest as `cmake -D... -P run_consumer.cmake` (see CMakeLists.txt here):
#  1. `cmake --install` the build tree into a scratch prefix;
#  2. configure and build tests/install/consumer against that prefix with find_package(libseq CONFIG REQUIRED);
#  3. run the consumer and compare its output with what the library must print.
# Needs a fully built tree (it runs under ctest after `cmake --build`): installing requires every installed target.
#
# Inputs (-D): BUILD_DIR, CONSUMER_SOURCE_DIR, SCRATCH_DIR, EXPECTED_VERSION, CONFIG, GENERATOR, CXX_COMPILER,
#              C_COMPILER, SAMPLES_DIR (data-samples/); optional MAKE_PROGRAM, CONSUMER_FLAGS (compile and link
#              flags, e.g. sanitizers).

foreach(input BUILD_DIR CONSUMER_SOURCE_DIR SCRATCH_DIR EXPECTED_VERSION CONFIG GENERATOR CXX_COMPILER C_COMPILER
        SAMPLES_DIR)
  if(NOT DEFINED ${input} OR "${${input}}" STREQUAL "")
    message(FATAL_ERROR "run_consumer.cmake: -D${input}=... is required")
  endif()
endforeach()

# Runs one step; on failure prints its output and stops with the step's name.
function(run_step name)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE result OUTPUT_VARIABLE output ERROR_VARIABLE error)
  if(NOT result EQUAL 0)
    set(hint "")
    if(name STREQUAL "install")
      set(hint "\n(the install step needs every installed target built: run `cmake --build` on the whole tree first)")
    endif()
    message(FATAL_ERROR "install_consumer: step '${name}' failed (${result}):\n${ARGN}\n--- stdout\n${output}\n"
                        "--- stderr\n${error}${hint}")
  endif()
  set(step_output "${output}" PARENT_SCOPE)
endfunction()

set(prefix "${SCRATCH_DIR}/prefix")
set(consumer_build "${SCRATCH_DIR}/consumer-build")
file(REMOVE_RECURSE "${SCRATCH_DIR}")
file(MAKE_DIRECTORY "${SCRATCH_DIR}")

# 1. Install.
run_step(install "${CMAKE_COMMAND}" --install "${BUILD_DIR}" --prefix "${prefix}" --config "${CONFIG}")
file(GLOB config_file "${prefix}/lib*/cmake/libseq/libseqConfig.cmake")
foreach(required "${prefix}/include/libseq/version.hpp" "${prefix}/include/libseq/data/panel.hpp")
  if(NOT EXISTS "${required}")
    message(FATAL_ERROR "install_consumer: ${required} was not installed")
  endif()
endforeach()
if(NOT config_file)
  message(FATAL_ERROR "install_consumer: no lib*/cmake/libseq/libseqConfig.cmake under ${prefix}")
endif()
# No public header may pull in HDF5 or NetCDF (house rule): check the installed copies.
file(GLOB_RECURSE installed_headers "${prefix}/include/libseq/*.hpp")
foreach(header IN LISTS installed_headers)
  file(STRINGS "${header}" leaks REGEX "#[ \t]*include[ \t]*[<\"](hdf5|H5[A-Za-z]*|netcdf)[^>\"]*[>\"]")
  if(leaks)
    message(FATAL_ERROR "install_consumer: installed header ${header} includes ${leaks}")
  endif()
endforeach()

# 2. Configure and build the consumer against the prefix only.
set(configure_args -S "${CONSUMER_SOURCE_DIR}" -B "${consumer_build}" -G "${GENERATOR}"
    "-DCMAKE_BUILD_TYPE=${CONFIG}" "-DCMAKE_CXX_COMPILER=${CXX_COMPILER}" "-DCMAKE_C_COMPILER=${C_COMPILER}"
    "-DCMAKE_PREFIX_PATH=${prefix}" -DCMAKE_FIND_USE_PACKAGE_REGISTRY=OFF)
if(MAKE_PROGRAM)
  list(APPEND configure_args "-DCMAKE_MAKE_PROGRAM=${MAKE_PROGRAM}")
endif()
if(CONSUMER_FLAGS)
  list(APPEND configure_args "-DCMAKE_CXX_FLAGS=${CONSUMER_FLAGS}" "-DCMAKE_EXE_LINKER_FLAGS=${CONSUMER_FLAGS}")
endif()
run_step(configure "${CMAKE_COMMAND}" ${configure_args})
if(NOT step_output MATCHES "consumer found libseq ([0-9.]+) in ([^\n]*)")
  message(FATAL_ERROR "install_consumer: configure did not report the libseq it found:\n${step_output}")
endif()
set(found_version "${CMAKE_MATCH_1}")
set(found_dir "${CMAKE_MATCH_2}")
string(FIND "${found_dir}" "${prefix}/" at)
if(NOT at EQUAL 0)
  message(FATAL_ERROR "install_consumer: consumer found libseq in ${found_dir}, not under the prefix ${prefix}")
endif()
if(NOT found_version STREQUAL EXPECTED_VERSION)
  message(FATAL_ERROR "install_consumer: package version ${found_version}, expected ${EXPECTED_VERSION}")
endif()
run_step(build "${CMAKE_COMMAND}" --build "${consumer_build}" --config "${CONFIG}")

# 3. Run and compare. Expected values follow from the consumer's inputs: 4 hourly steps from 2022-01-01T00Z, one of
# four values missing, value 5.0 at step 3, and require_variable throwing libseq::DataError for an absent name;
# then the demo catchments (data-samples/README.md: 4 gauges, 5479 days from 2008-01-01), whose NetCDF and HDF5
# copies hold the same float32 values (the generator writes the unpacked discharge into both).
find_program(consumer NAMES libseq_consumer PATHS "${consumer_build}" "${consumer_build}/${CONFIG}" NO_DEFAULT_PATH)
if(NOT consumer)
  message(FATAL_ERROR "install_consumer: built consumer not found in ${consumer_build}")
endif()
run_step(run "${consumer}" "${SAMPLES_DIR}/catchments.nc" "${SAMPLES_DIR}/catchments.h5")
set(expected_lines
    "libseq version ${EXPECTED_VERSION}"
    "panel sites=1 times=4 variables=1"
    "axis 2022-01-01T00:00:00Z .. 2022-01-01T03:00:00Z step 1 hour"
    "load[3]=5.00 missing_fraction=0.25"
    "missing variable throws DataError"
    "netcdf sites=4 times=5479 variables=3 step 1 day from 2008-01-01T00:00:00Z"
    "netcdf and hdf5 differing cells=0")
# Compared as whole text: CMake lists mishandle the square brackets of "load[3]".
string(JOIN "\n" expected_text ${expected_lines})
string(STRIP "${step_output}" actual_text)
if(NOT actual_text STREQUAL expected_text)
  message(FATAL_ERROR "install_consumer: consumer printed\n${step_output}\nexpected\n${expected_text}")
endif()
message(STATUS "install_consumer: installed into ${prefix}, consumer built and printed the expected lines")
