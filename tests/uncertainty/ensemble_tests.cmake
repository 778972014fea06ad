# Ensembles of networks and MC dropout (uncertainty/ensemble.hpp).

libseq_add_test(uncertainty_ensemble_test SOURCES ensemble_test.cpp MODULES core data io nn train uncertainty)
# The calibrated-coverage check on a known process (trains four 4-member GRU ensembles; a few seconds in Release,
# labelled slow because it trains networks to convergence).
libseq_add_test(uncertainty_ensemble_coverage_test SOURCES ensemble_coverage_test.cpp
                MODULES core data io nn train uncertainty LABELS slow)
