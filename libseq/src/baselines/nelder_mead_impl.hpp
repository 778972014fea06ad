#pragma once
// A small unconstrained Nelder-Mead minimiser for the baselines' few-parameter fits. Bounds are handled by the
// caller through a reparametrisation (e.g. logistic), so the search itself is unconstrained.

#include <cstddef>
#include <functional>
#include <vector>

namespace libseq::baselines::detail {

struct NelderMeadResult {
  std::vector<double> x;      // best point found
  double value = 0.0;         // objective there
  std::size_t evaluations = 0;
  bool converged = false;     // simplex collapsed below the tolerances before max_evaluations
};

// Minimises `objective` from `start` with an initial simplex of edge `step` along each axis. Coefficients are the
// standard ones of Nelder & Mead (1965, Computer Journal 7:308): reflection 1, expansion 2, contraction 1/2,
// shrink 1/2, with the inside/outside contraction choice of Lagarias et al. (1998, SIAM J. Optim. 9:112).
// Stops when the spread of objective values falls below f_tolerance·(|f_best| + 1e-300) and the simplex diameter
// below x_tolerance, or after max_evaluations.
NelderMeadResult nelder_mead(const std::function<double(const std::vector<double>&)>& objective,
                             std::vector<double> start, double step, std::size_t max_evaluations,
                             double f_tolerance = 1e-12, double x_tolerance = 1e-9);

}  // namespace libseq::baselines::detail
