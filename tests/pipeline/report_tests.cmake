# Tests of the HTML report (libseq/src/pipeline/report*.cpp). The report sources are compiled into these targets
# directly, with the core, data and io modules, so that they build while the rest of the pipeline module (which
# needs every other module) is being written.
set(report_sources ${PROJECT_SOURCE_DIR}/libseq/src/pipeline/report.cpp
                   ${PROJECT_SOURCE_DIR}/libseq/src/pipeline/report_charts.cpp
                   ${PROJECT_SOURCE_DIR}/libseq/src/pipeline/report_assets.cpp)
libseq_add_test(pipeline_report_test SOURCES report_test.cpp ${report_sources} MODULES core data io metrics)
target_include_directories(pipeline_report_test PRIVATE ${PROJECT_SOURCE_DIR}/libseq/src)

# Headless-browser check: a helper writes a report from a synthetic results file, chromium renders it.
add_executable(report_render_helper ${PROJECT_SOURCE_DIR}/tests/report/render_helper.cpp ${report_sources})
target_include_directories(report_render_helper PRIVATE ${PROJECT_SOURCE_DIR}/tests ${PROJECT_SOURCE_DIR}/libseq/src)
target_link_libraries(report_render_helper PRIVATE libseq_core libseq_data libseq_io libseq_metrics libseq_settings)
add_test(NAME report.renders_in_headless_chromium
         COMMAND bash ${PROJECT_SOURCE_DIR}/tests/report/render_check.sh $<TARGET_FILE:report_render_helper>
                 ${PROJECT_BINARY_DIR}/test-scratch/report_render)
set_tests_properties(report.renders_in_headless_chromium PROPERTIES LABELS cli TIMEOUT 300)
