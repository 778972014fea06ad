# `runnel run` / `runnel init` CLI tests and the outside checks of the output files (included from
# tests/apps/CMakeLists.txt). The gtest cases run the binary (libseq::test::runnel_exe()); the checkers under
# tests/outputs/ read the outputs of the tiny job (tests/apps/data/tiny_catchments.toml) with Debian tools.
if(TARGET runnel)
  # Module io: the thread-count case reads results.h5 back with the library's reader to compare two runs.
  libseq_add_test(apps_run_cli_test SOURCES run_cli_test.cpp MODULES core data io LABELS cli)
  add_dependencies(apps_run_cli_test runnel)  # building the test builds the binary it runs

  # The tiny job once, as a fixture; the checkers require it so that CTest runs it first (also under -R or -L).
  set(runnel_tiny_dir ${PROJECT_BINARY_DIR}/test-scratch/outputs_tiny)
  add_test(NAME outputs_tiny_job_runs
           COMMAND ${CMAKE_COMMAND} -DRUNNEL_EXE=$<TARGET_FILE:runnel>
                   -DJOB=${CMAKE_CURRENT_SOURCE_DIR}/data/tiny_catchments.toml
                   -DDATA_DIR=${PROJECT_SOURCE_DIR}/data-samples -DWORK_DIR=${runnel_tiny_dir}
                   -P ${PROJECT_SOURCE_DIR}/tests/outputs/run_tiny_job.cmake)
  set_tests_properties(outputs_tiny_job_runs PROPERTIES FIXTURES_SETUP runnel_tiny_outputs LABELS validation
                       TIMEOUT 300)
  set(runnel_checker_python /usr/bin/python3)  # Debian's interpreter: the one python3-h5py/xarray install into
  add_test(NAME outputs_results_h5_h5py
           COMMAND ${runnel_checker_python} ${PROJECT_SOURCE_DIR}/tests/outputs/check_results_h5.py
                   ${runnel_tiny_dir}/tiny-output ${runnel_tiny_dir}/tiny_catchments.toml
                   ${PROJECT_SOURCE_DIR}/data-samples/catchments.nc)
  add_test(NAME outputs_hindcasts_nc_xarray
           COMMAND ${runnel_checker_python} ${PROJECT_SOURCE_DIR}/tests/outputs/check_hindcasts_nc.py
                   ${runnel_tiny_dir}/tiny-output)
  add_test(NAME outputs_gdalinfo_ogrinfo
           COMMAND ${runnel_checker_python} ${PROJECT_SOURCE_DIR}/tests/outputs/check_gdal_ogr.py
                   ${runnel_tiny_dir}/tiny-output)
  set_tests_properties(outputs_results_h5_h5py outputs_hindcasts_nc_xarray outputs_gdalinfo_ogrinfo PROPERTIES
                       FIXTURES_REQUIRED runnel_tiny_outputs LABELS validation TIMEOUT 120)

  # Two writer details these checks once caught (member seeds >= 2^63 read back negative; elevation's CF
  # standard_name): tests/outputs/check_known_bugs.py keeps them fixed.
  add_test(NAME outputs_writer_details
           COMMAND ${runnel_checker_python} ${PROJECT_SOURCE_DIR}/tests/outputs/check_known_bugs.py
                   ${runnel_tiny_dir}/tiny-output)
  set_tests_properties(outputs_writer_details PROPERTIES FIXTURES_REQUIRED runnel_tiny_outputs LABELS validation)
endif()
