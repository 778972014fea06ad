# Ensembles of networks and MC dropout (uncertainty/ensemble.hpp). The uncertainty objects now include the ensemble,
# which calls nn and train (and train's model I/O calls io), so every test linking libseq_uncertainty needs those
# object libraries too; the three older uncertainty tests get them here until their MODULES lists name them.
foreach(older_test uncertainty_mixture_test uncertainty_resample_test uncertainty_conformal_test)
  if(TARGET ${older_test})
    target_link_libraries(${older_test} PRIVATE libseq_io libseq_nn libseq_train)
  endif()
endforeach()

libseq_add_test(uncertainty_ensemble_test SOURCES ensemble_test.cpp MODULES core data io nn train uncertainty)
# The calibrated-coverage check on a known process (trains four 4-member GRU ensembles; a few seconds in Release,
# labelled slow because it trains networks to convergence).
libseq_add_test(uncertainty_ensemble_coverage_test SOURCES ensemble_coverage_test.cpp
                MODULES core data io nn train uncertainty LABELS slow)
