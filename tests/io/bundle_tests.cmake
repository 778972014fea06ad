# Model bundle container (included by tests/io/CMakeLists.txt).
libseq_add_test(io_bundle_test SOURCES ${CMAKE_CURRENT_SOURCE_DIR}/bundle_test.cpp MODULES core data io)
