# Tests of the inspect library call (engineer "files"). The pipeline objects refer to every other module.
libseq_add_test(pipeline_inspect_test SOURCES inspect_test.cpp
                MODULES core data io nn train uncertainty baselines metrics pipeline)
