# Tests of the inspect library call (engineer "files").

# libseq_add_test hands LIBSEQ_TEST_ENVIRONMENT to gtest_discover_tests as a plain list, which flattens it so that
# only the first variable reaches the tests; escaping the separators inside this wrapper's scope keeps all of them.
function(inspect_add_test)
  string(REPLACE ";" "\\;" LIBSEQ_TEST_ENVIRONMENT "${LIBSEQ_TEST_ENVIRONMENT}")
  libseq_add_test(${ARGN})
endfunction()

inspect_add_test(pipeline_inspect_test SOURCES inspect_test.cpp MODULES core data io nn train uncertainty baselines metrics pipeline)
