#include <algorithm>
#include <cmath>
#include <numeric>

#include "baselines/nelder_mead_impl.hpp"

namespace libseq::baselines::detail {

NelderMeadResult nelder_mead(const std::function<double(const std::vector<double>&)>& objective,
                             std::vector<double> start, double step, std::size_t max_evaluations,
                             double f_tolerance, double x_tolerance) {
  const std::size_t n = start.size();
  NelderMeadResult result;
  std::vector<std::vector<double>> simplex(n + 1, start);
  std::vector<double> values(n + 1);
  auto eval = [&](const std::vector<double>& x) {
    ++result.evaluations;
    const double v = objective(x);
    return std::isnan(v) ? HUGE_VAL : v;
  };
  for (std::size_t i = 0; i < n; ++i) simplex[i + 1][i] += step;
  for (std::size_t i = 0; i <= n; ++i) values[i] = eval(simplex[i]);
  std::vector<std::size_t> order(n + 1);
  std::vector<double> centroid(n), trial(n), trial2(n);
  auto along = [&](double t, std::vector<double>& out) {  // centroid + t (centroid − worst)
    for (std::size_t k = 0; k < n; ++k) out[k] = centroid[k] + t * (centroid[k] - simplex[order[n]][k]);
  };
  while (result.evaluations < max_evaluations) {
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
    const double best = values[order[0]];
    const double worst = values[order[n]];
    double diameter = 0.0;
    for (std::size_t i = 1; i <= n; ++i) {
      for (std::size_t k = 0; k < n; ++k) {
        diameter = std::max(diameter, std::abs(simplex[order[i]][k] - simplex[order[0]][k]));
      }
    }
    if (worst - best <= f_tolerance * (std::abs(best) + 1e-300) && diameter <= x_tolerance) {
      result.converged = true;
      break;
    }
    std::fill(centroid.begin(), centroid.end(), 0.0);
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t k = 0; k < n; ++k) centroid[k] += simplex[order[i]][k] / static_cast<double>(n);
    }
    const double second_worst = values[order[n - 1]];
    along(1.0, trial);
    const double fr = eval(trial);
    if (fr < best) {
      along(2.0, trial2);
      const double fe = eval(trial2);
      if (fe < fr) {
        simplex[order[n]] = trial2;
        values[order[n]] = fe;
      } else {
        simplex[order[n]] = trial;
        values[order[n]] = fr;
      }
      continue;
    }
    if (fr < second_worst) {
      simplex[order[n]] = trial;
      values[order[n]] = fr;
      continue;
    }
    // Contraction: outside when the reflected point beats the worst, inside otherwise.
    const bool outside = fr < worst;
    along(outside ? 0.5 : -0.5, trial2);
    const double fc = eval(trial2);
    if (fc < (outside ? fr : worst)) {
      simplex[order[n]] = trial2;
      values[order[n]] = fc;
      continue;
    }
    for (std::size_t i = 1; i <= n; ++i) {  // shrink toward the best vertex
      auto& v = simplex[order[i]];
      for (std::size_t k = 0; k < n; ++k) v[k] = simplex[order[0]][k] + 0.5 * (v[k] - simplex[order[0]][k]);
      values[order[i]] = eval(v);
    }
  }
  const auto best_index = static_cast<std::size_t>(std::min_element(values.begin(), values.end()) - values.begin());
  result.x = simplex[best_index];
  result.value = values[best_index];
  return result;
}

}  // namespace libseq::baselines::detail
