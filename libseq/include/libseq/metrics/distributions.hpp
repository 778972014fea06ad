#pragma once
/// @file distributions.hpp
/// Normal and Student t distribution functions (thin, checked wrappers over Boost.Math) for every module that needs
/// a probability, a density or a quantile. All functions are pure and thread-safe.

namespace libseq::metrics {

/// Density of the normal distribution N(mean, sd²) at x.
/// @throws libseq::DataError when sd is not finite and > 0, or mean or x is NaN.
double normal_pdf(double x, double mean = 0.0, double sd = 1.0);

/// Cumulative probability P(X ≤ x) of N(mean, sd²); x may be ±infinity (gives 0 or 1).
/// @throws libseq::DataError when sd is not finite and > 0, or mean or x is NaN.
double normal_cdf(double x, double mean = 0.0, double sd = 1.0);

/// Quantile (inverse cdf) of N(mean, sd²) at probability p in [0, 1]; p = 0 gives -infinity, p = 1 +infinity.
/// @throws libseq::DataError when p is outside [0, 1] or NaN, or sd is not finite and > 0.
double normal_quantile(double p, double mean = 0.0, double sd = 1.0);

/// Cumulative probability P(T ≤ x) of Student's t with `degrees_of_freedom` (> 0, need not be whole).
/// @throws libseq::DataError when degrees_of_freedom is not > 0 (or NaN), or x is NaN.
double student_t_cdf(double x, double degrees_of_freedom);

/// Quantile of Student's t with `degrees_of_freedom` (> 0) at p in [0, 1]; p = 0 or 1 gives ∓/±infinity.
/// @throws libseq::DataError when p is outside [0, 1] or NaN, or degrees_of_freedom is not > 0.
double student_t_quantile(double p, double degrees_of_freedom);

}  // namespace libseq::metrics
