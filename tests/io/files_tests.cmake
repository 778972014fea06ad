# Tests of the runnel HDF5 and CSV readers and of format detection (engineer "files").

# libseq_add_test hands LIBSEQ_TEST_ENVIRONMENT to gtest_discover_tests as a plain list, which flattens it so
# that only the first variable reaches the tests. Escaping the separators inside this wrapper's scope keeps all
# of them (RUNNEL_BINARY_DIR, RUNNEL_EXE ...) without changing tests/CMakeLists.txt for anyone else.
function(files_add_test)
  string(REPLACE ";" "\\;" LIBSEQ_TEST_ENVIRONMENT "${LIBSEQ_TEST_ENVIRONMENT}")
  libseq_add_test(${ARGN})
endfunction()

files_add_test(io_hdf5_reader_test SOURCES hdf5_reader_test.cpp MODULES core data io)
files_add_test(io_csv_reader_test SOURCES csv_reader_test.cpp MODULES core data io)
files_add_test(io_reader_test SOURCES reader_test.cpp MODULES core data io)
