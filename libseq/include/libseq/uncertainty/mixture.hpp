#pragma once
/// @file mixture.hpp
/// Combines the predictive distributions of ensemble members into one equally weighted mixture per case (a case is
/// one (site, issue time, lead) triple, flattened by the caller) and summarises it: mean, variance, spread, median,
/// requested quantiles and, optionally, one value per member.
///
/// Members come in three kinds:
///  - Gaussian (mean, variance): mixture quantiles by a bracketed, safeguarded Newton search on the mixture CDF;
///  - quantile sets (levels + values): each member's CDF is the linear interpolation between its quantiles with a
///    stated tail rule; the mixture CDF is their average, inverted exactly (it is piecewise linear);
///  - point values (members × Monte-Carlo passes): the empirical distribution, quantiles by Hyndman & Fan (1996)
///    definition 7 (the default of R `quantile` and numpy's method "linear").
/// All functions are pure and thread-safe; `mix` runs cases in parallel with OpenMP and gives the same result for any
/// thread count.

#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::uncertainty {

/// What each member of an ensemble forecasts.
enum class MemberKind {
  gaussian,   ///< A normal distribution per case: mean and variance.
  quantiles,  ///< A set of quantiles at fixed levels per case.
  points,     ///< One value per case (a member, or one Monte-Carlo dropout pass of a member).
};

/// "gaussian", "quantiles", "points".
std::string to_string(MemberKind kind);
/// Inverse of to_string. @throws libseq::ConfigError naming `key`, the text and the accepted names.
MemberKind parse_member_kind(std::string_view text, std::string_view key = "mixture.member_kind");

/// How a quantile-set member's CDF continues below its lowest and above its highest quantile.
enum class QuantileTail {
  /// The outermost segments extend linearly (same slope of CDF per unit value) until the CDF reaches 0 below and 1
  /// above: the lowest level's mass τ_1 is spread uniformly over [q_1 - τ_1 (q_2 - q_1)/(τ_2 - τ_1), q_1], likewise
  /// above. Bounded support; a natural choice when the levels reach well into the tails. When the outermost
  /// segment has zero width (tied quantiles) the tail mass sits on the endpoint.
  linear,
  /// The mass below the lowest level sits on q_1 and the mass above the highest level sits on q_K (the narrowest
  /// distribution consistent with the quantiles). Levels outside [τ_1, τ_K] then return q_1 or q_K.
  point_mass,
};

/// "linear", "point_mass".
std::string to_string(QuantileTail tail);
/// Inverse of to_string. @throws libseq::ConfigError naming `key`, the text and the accepted names.
QuantileTail parse_quantile_tail(std::string_view text, std::string_view key = "mixture.quantile_tail");

/// Options of the mixture summaries.
struct MixtureOptions {
  /// Quantile levels to report, each in the open interval (0, 1); any order, duplicates allowed. The median is
  /// always reported separately.
  std::vector<double> levels = {0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95};
  /// Tail rule of quantile-set members (ignored by other kinds).
  QuantileTail quantile_tail = QuantileTail::linear;
  /// Gaussian mixtures: the search stops when the bracket or Newton step is below this times
  /// max(|x|, mixture standard deviation). Must lie in [1e-15, 1e-3]. Smaller costs a step or two more.
  double relative_tolerance = 1e-10;
  /// Also return one value per member (Gaussian and quantile-set members: the member's mean; points: the value).
  bool keep_member_values = false;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Summary of one mixture. Members with a non-finite input (a diverged member, a missing MC pass) are left out and
/// counted; when no member is left, every number is NaN.
struct MixtureSummary {
  double mean = 0.0;      ///< Mixture mean, in the units of the forecasts.
  double variance = 0.0;  ///< Mixture variance (law of total variance; points: 1/N, the empirical distribution's).
  double spread = 0.0;    ///< Standard deviation, sqrt(variance).
  double median = 0.0;    ///< Quantile at level 0.5 by the same rule as `quantiles`.
  std::vector<double> quantiles;      ///< One per MixtureOptions::levels, same order.
  std::vector<double> member_values;  ///< When keep_member_values: one per input member (NaN if left out).
  std::size_t members_used = 0;       ///< Members that entered the mixture.
};

/// Mixture of Gaussian members N(means[m], variances[m]); variance 0 is a point mass.
/// @throws libseq::DataError when the spans differ in length or a variance is negative;
///         libseq::ConfigError from options.validate().
MixtureSummary mix_gaussian(std::span<const double> means, std::span<const double> variances,
                            const MixtureOptions& options);

/// Mixture of quantile-set members: `values` holds member_count × levels.size() numbers, row-major by member, the
/// quantiles of member m at `levels` (strictly increasing, in (0, 1), at least 2). A member whose quantiles cross is
/// repaired by sorting its values (the monotone rearrangement of Chernozhukov, Fernández-Val & Galichon 2010,
/// Econometrica 78, which never increases the error of the quantile function; from memory).
/// @throws libseq::DataError on bad levels or a length that is not a multiple of levels.size();
///         libseq::ConfigError from options.validate().
MixtureSummary mix_quantile_sets(std::span<const double> levels, std::span<const double> values,
                                 const MixtureOptions& options);

/// Empirical distribution of point values (members, or members × MC passes). @throws libseq::ConfigError from
/// options.validate().
MixtureSummary mix_points(std::span<const double> values, const MixtureOptions& options);

/// CDF of the equally weighted Gaussian mixture at x (non-finite members skipped; NaN when none is left).
double gaussian_mixture_cdf(double x, std::span<const double> means, std::span<const double> variances);

/// Quantile inf{x : F(x) >= p} of the Gaussian mixture, p in (0, 1). The root lies between the smallest and the
/// largest member quantile at p (each member CDF is <= p below the first and >= p above the second); the search
/// keeps that bracket and takes Newton steps inside it, bisecting when a step leaves it.
/// @throws libseq::DataError when p is not in (0, 1), spans differ in length or a variance is negative.
double gaussian_mixture_quantile(double p, std::span<const double> means, std::span<const double> variances,
                                 double relative_tolerance = 1e-10);

/// Hyndman & Fan (1996) definition 7 quantile of sorted values: with h = (N - 1) p, x[floor h] + (h - floor h)
/// (x[floor h + 1] - x[floor h]). NaN for an empty span. @throws libseq::DataError when p is not in [0, 1].
double empirical_quantile(std::span<const double> sorted_values, double p);

/// Members' forecasts for many cases, laid out flat and row-major (case, member[, level]).
struct MemberForecasts {
  MemberKind kind = MemberKind::gaussian;
  std::size_t case_count = 0;     ///< Number of (site, issue, lead) cases.
  std::size_t member_count = 0;   ///< Members per case (for points: members × MC passes).
  std::vector<double> means;      ///< gaussian: case_count × member_count.
  std::vector<double> variances;  ///< gaussian: case_count × member_count, >= 0.
  std::vector<double> levels;     ///< quantiles: the member quantile levels, strictly increasing in (0, 1).
  std::vector<double> values;     ///< quantiles: case_count × member_count × levels.size(); points: case × member.

  /// @throws libseq::DataError naming the first field whose length does not match the shape.
  void validate() const;
};

/// Summaries of many cases, flat arrays.
struct MixtureTable {
  std::size_t case_count = 0;
  std::vector<double> levels;             ///< The requested levels (copy of MixtureOptions::levels).
  std::vector<double> mean;               ///< case_count.
  std::vector<double> variance;           ///< case_count.
  std::vector<double> spread;             ///< case_count.
  std::vector<double> median;             ///< case_count.
  std::vector<double> quantiles;          ///< case_count × levels.size(), row-major.
  std::vector<double> member_values;      ///< case_count × member_count when keep_member_values, else empty.
  std::vector<std::size_t> members_used;  ///< case_count.
};

/// Summarises every case of `forecasts` (OpenMP over cases). @throws what forecasts.validate(), options.validate()
/// and the single-case functions throw.
MixtureTable mix(const MemberForecasts& forecasts, const MixtureOptions& options);

}  // namespace libseq::uncertainty
