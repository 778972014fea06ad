#include "libseq/metrics/distributions.hpp"

#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>

#include "libseq/error.hpp"

namespace libseq::metrics {

namespace {

// Boost.Math's default policy throws std::overflow_error at p = 0 or 1; the documented contract here is ±infinity,
// and argument errors are reported as libseq::DataError before Boost sees them.
using Policy =
    boost::math::policies::policy<boost::math::policies::overflow_error<boost::math::policies::ignore_error>>;

std::string number(double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

void require_not_nan(const char* function, const char* name, double x) {
  if (std::isnan(x)) throw DataError(std::string(function) + ": '" + name + "' is NaN; expected a number");
}

void require_scale(const char* function, double sd) {
  if (!(std::isfinite(sd) && sd > 0)) {
    throw DataError(std::string(function) + ": 'sd' is " + number(sd) + "; expected a finite value > 0");
  }
}

void require_probability(const char* function, double p) {
  if (!(p >= 0.0 && p <= 1.0)) {
    throw DataError(std::string(function) + ": 'p' is " + number(p) + "; expected a probability in [0, 1]");
  }
}

void require_dof(const char* function, double dof) {
  if (!(dof > 0)) {
    throw DataError(std::string(function) + ": 'degrees_of_freedom' is " + number(dof) + "; expected a value > 0");
  }
}

}  // namespace

double normal_pdf(double x, double mean, double sd) {
  require_not_nan("normal_pdf", "x", x);
  require_not_nan("normal_pdf", "mean", mean);
  require_scale("normal_pdf", sd);
  if (std::isinf(x)) return 0.0;
  return boost::math::pdf(boost::math::normal_distribution<double, Policy>(mean, sd), x);
}

double normal_cdf(double x, double mean, double sd) {
  require_not_nan("normal_cdf", "x", x);
  require_not_nan("normal_cdf", "mean", mean);
  require_scale("normal_cdf", sd);
  if (std::isinf(x)) return x > 0 ? 1.0 : 0.0;
  return boost::math::cdf(boost::math::normal_distribution<double, Policy>(mean, sd), x);
}

double normal_quantile(double p, double mean, double sd) {
  require_probability("normal_quantile", p);
  require_not_nan("normal_quantile", "mean", mean);
  require_scale("normal_quantile", sd);
  if (p == 0.0) return -std::numeric_limits<double>::infinity();
  if (p == 1.0) return std::numeric_limits<double>::infinity();
  return boost::math::quantile(boost::math::normal_distribution<double, Policy>(mean, sd), p);
}

double student_t_cdf(double x, double degrees_of_freedom) {
  require_not_nan("student_t_cdf", "x", x);
  require_dof("student_t_cdf", degrees_of_freedom);
  if (std::isinf(x)) return x > 0 ? 1.0 : 0.0;
  return boost::math::cdf(boost::math::students_t_distribution<double, Policy>(degrees_of_freedom), x);
}

double student_t_quantile(double p, double degrees_of_freedom) {
  require_probability("student_t_quantile", p);
  require_dof("student_t_quantile", degrees_of_freedom);
  if (p == 0.0) return -std::numeric_limits<double>::infinity();
  if (p == 1.0) return std::numeric_limits<double>::infinity();
  return boost::math::quantile(boost::math::students_t_distribution<double, Policy>(degrees_of_freedom), p);
}

}  // namespace libseq::metrics
