# Operational path: fit_job writes one bundle of a whole job, forecast_from_bundle reproduces the hindcast from it.
libseq_add_test(pipeline_operational_bundle_test SOURCES ${CMAKE_CURRENT_SOURCE_DIR}/operational_bundle_test.cpp
                MODULES core data io nn train uncertainty baselines metrics pipeline)
