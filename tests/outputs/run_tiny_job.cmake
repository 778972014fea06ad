# CTest fixture (tests/apps/run_tests.cmake): runs the tiny job of tests/apps/data/tiny_catchments.toml so that the
# output checkers in this folder have fresh files to read. Usage:
#   cmake -DRUNNEL_EXE=<runnel> -DJOB=<tiny_catchments.toml> -DDATA_DIR=<source>/data-samples -DWORK_DIR=<scratch>
#         -P run_tiny_job.cmake
# The job is copied into WORK_DIR with its data path made absolute; its outputs go to WORK_DIR/tiny-output, which is
# removed first so a checker never reads the files of an earlier run.
foreach(var RUNNEL_EXE JOB DATA_DIR WORK_DIR)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "run_tiny_job.cmake: -D${var}=... is required")
  endif()
endforeach()
file(REMOVE_RECURSE "${WORK_DIR}")
file(MAKE_DIRECTORY "${WORK_DIR}")
file(READ "${JOB}" text)
string(REPLACE "\"../../../data-samples/" "\"${DATA_DIR}/" text "${text}")
file(WRITE "${WORK_DIR}/tiny_catchments.toml" "${text}")
execute_process(COMMAND "${RUNNEL_EXE}" run "${WORK_DIR}/tiny_catchments.toml"
                RESULT_VARIABLE code OUTPUT_VARIABLE out ERROR_VARIABLE err)
message("${out}")
if(NOT code EQUAL 0)
  message(FATAL_ERROR "runnel run on the tiny job exited ${code}:\n${err}")
endif()
foreach(name results.h5 hindcasts.nc stations.geojson report.html)
  if(NOT EXISTS "${WORK_DIR}/tiny-output/${name}")
    message(FATAL_ERROR "runnel run exited 0 but did not write ${WORK_DIR}/tiny-output/${name}")
  endif()
endforeach()
