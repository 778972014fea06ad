libseq_add_test(io_results_test SOURCES results_test.cpp MODULES core data io)
