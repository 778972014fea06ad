# `runnel fit` / `runnel forecast` CLI tests (included from tests/apps/CMakeLists.txt). The cases run the binary
# (libseq::test::runnel_exe()) on the tiny job (tests/apps/data/tiny_catchments.toml) and the demo data.
if(TARGET runnel)
  libseq_add_test(apps_fit_forecast_test SOURCES fit_forecast_test.cpp MODULES core data io LABELS cli)
  add_dependencies(apps_fit_forecast_test runnel)  # building the test builds the binary it runs
endif()
