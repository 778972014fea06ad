#pragma once
/// @file probabilistic.hpp
/// Scores and diagnostics of probabilistic forecasts in three forms: a Gaussian (mean, sd), an ensemble (members)
/// and a quantile set (levels, quantile values). CRPS, pinball loss, interval score, coverage, PIT and its
/// histogram, reliability table. Formulas, conventions and references: docs/methods-metrics.md.
///
/// Layouts: per-case spans (`observed`, `means`, `sds`, `lower`, `upper`) have one value per case. Ensembles are
/// case-major: `members[case * member_count + k]`. Quantile sets are case-major: `quantiles[case * levels.size() +
/// k]` is the quantile at `levels[k]`; levels are strictly increasing in (0, 1).
///
/// Missing values: a case whose observation is not finite is skipped and counted in `missing_observation`. A case
/// whose forecast is unusable (non-finite mean or sd, every member non-finite, a non-finite quantile or bound) is
/// skipped and counted in `missing_forecast`. Individual non-finite ensemble members are dropped and the case is
/// scored on the others. Mismatched lengths and invalid levels throw libseq::DataError naming the function.
/// All functions are pure (the PIT of an ensemble draws from a seed, see there) and thread-safe.

#include <cstddef>
#include <cstdint>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/metrics/metric_value.hpp"

namespace libseq::metrics {

// --- CRPS --------------------------------------------------------------------------------------------------------

/// CRPS of N(mean, sd²) for observation y in closed form (Gneiting et al. 2005, eq. 5):
/// sd·[z(2Φ(z) − 1) + 2φ(z) − 1/√π], z = (y − mean)/sd; units of y. sd = 0 gives |y − mean|.
/// @throws libseq::DataError when sd < 0 or any argument is not finite (NaN or infinite).
double crps_gaussian(double mean, double sd, double observed);

/// Mean Gaussian CRPS over the cases; a case with a non-finite mean or a non-finite or negative sd is a missing
/// forecast.
MetricValue crps_gaussian(std::span<const double> observed, std::span<const double> means, std::span<const double> sds);

/// Which estimator of the CRPS of an ensemble.
enum class EnsembleCrps {
  plain,  ///< CRPS of the empirical distribution of the members: E|X−y| − ½E|X−X′| (kernel form, 1/m² pairs).
  fair,   ///< Fair CRPS (Ferro 2014): the pair term averaged over m(m−1) distinct pairs; needs m ≥ 2.
};
/// "plain" or "fair".
std::string to_string(EnsembleCrps kind);
/// Parses "plain" or "fair". @throws libseq::ConfigError naming `key`, the value and the accepted names.
EnsembleCrps parse_ensemble_crps(std::string_view text, std::string_view key = "ensemble_crps");

/// CRPS of an ensemble for one observation, computed in O(m log m) by sorting a copy of the members
/// (Σ_{i,j}|x_i − x_j| = 2·Σ_i (2i − m − 1)·x_(i) for the sorted members, i = 1..m). Non-finite members are dropped.
/// Returns NaN when no member is finite, or for `fair` when fewer than 2 are.
/// @throws libseq::DataError when the observation is NaN.
double crps_ensemble(std::span<const double> members, double observed, EnsembleCrps kind = EnsembleCrps::plain);

/// Mean ensemble CRPS over the cases (case-major members, `member_count` per case; see the file comment).
/// @throws libseq::DataError when member_count is 0 or members.size() != observed.size() * member_count.
MetricValue crps_ensemble(std::span<const double> observed, std::span<const double> members, std::size_t member_count,
                          EnsembleCrps kind = EnsembleCrps::plain);

/// Pinball (quantile) loss of the quantile q at level tau in (0, 1) for observation y (Koenker & Bassett 1978):
/// tau·(y − q) when y ≥ q, (1 − tau)·(q − y) when y < q. Units of y.
/// @throws libseq::DataError when tau is not in (0, 1) or an argument is NaN.
double pinball_loss(double level, double quantile, double observed);

/// CRPS approximated from a quantile set: (2/Q)·Σ_k pinball(levels[k], quantiles[k], y), i.e. the rectangle rule
/// for CRPS = 2∫₀¹ pinball_τ dτ (Laio & Tamea 2007; Gneiting & Ranjan 2011) with weight 1/Q per level. It is
/// accurate when the levels are the midpoints (k − ½)/Q, k = 1..Q; for other spacings it is a rescaled sum, not the
/// CRPS. Units of y.
/// @throws libseq::DataError when the levels are invalid or the two spans differ in length.
double crps_quantiles(std::span<const double> levels, std::span<const double> quantiles, double observed);

/// Mean quantile-set CRPS over the cases (case-major quantiles; a case with any non-finite quantile is a missing
/// forecast).
MetricValue crps_quantiles(std::span<const double> observed, std::span<const double> levels,
                           std::span<const double> quantiles);

/// Mean pinball loss per level: element k is the mean over the cases of pinball(levels[k], q_k, y).
std::vector<MetricValue> pinball_by_level(std::span<const double> observed, std::span<const double> levels,
                                          std::span<const double> quantiles);

// --- Intervals ---------------------------------------------------------------------------------------------------

/// Interval (Winkler) score of the central (1 − alpha) interval [lower, upper] for observation y (Gneiting &
/// Raftery 2007, eq. 43): (upper − lower) + (2/alpha)(lower − y)·1{y < lower} + (2/alpha)(y − upper)·1{y > upper}.
/// Units of y; lower is better.
/// @throws libseq::DataError when alpha is not in (0, 1), lower > upper, or an argument is NaN.
double interval_score(double lower, double upper, double observed, double alpha);

/// Mean interval score over the cases; a case with a non-finite bound or lower > upper is a missing forecast.
MetricValue interval_score(std::span<const double> observed, std::span<const double> lower,
                           std::span<const double> upper, double alpha);

/// Prediction interval coverage probability (PICP) and mean width.
struct CoverageResult {
  double coverage = std::numeric_limits<double>::quiet_NaN();    ///< Fraction of cases with lower ≤ y ≤ upper.
  double mean_width = std::numeric_limits<double>::quiet_NaN();  ///< Mean of upper − lower, units of y.
  SampleCounts counts;                                           ///< Cases used and skipped.
};

/// Coverage and mean width of the intervals [lower, upper] (closed at both ends).
CoverageResult coverage(std::span<const double> observed, std::span<const double> lower, std::span<const double> upper);

// --- PIT, histogram, reliability ---------------------------------------------------------------------------------

/// PIT values Φ((y − mean)/sd), one per case, NaN for a skipped case (same rules as crps_gaussian; sd must be > 0).
std::vector<double> pit_gaussian(std::span<const double> observed, std::span<const double> means,
                                 std::span<const double> sds);

/// Randomised PIT of ensembles, one per case, NaN for a skipped case. With s members below y and e members equal
/// to y among the m finite members, PIT = (s + W)/(m + 1), W uniform on (0, e + 1): the rank of y among the m + 1
/// values with ties broken at random (Hamill 2001), spread uniformly within its rank bin so that a calibrated
/// ensemble gives uniform PIT. The uniform of case i is a hash of (seed, i), so a case's value does not depend on
/// the others or on the thread count.
std::vector<double> pit_ensemble(std::span<const double> observed, std::span<const double> members,
                                 std::size_t member_count, std::uint64_t seed);

/// PIT of quantile sets by linear interpolation of the level between the two quantiles that bracket y, one per case,
/// NaN for a skipped case. Below the lowest quantile the PIT is levels.front()/2, above the highest it is
/// (1 + levels.back())/2 (the middle of the tail, whose shape a quantile set does not give); so a histogram whose
/// bin edges include the lowest and highest level counts the tails exactly. Crossed quantiles are sorted first
/// (monotone rearrangement); where several quantiles equal y the PIT is the mean of their levels.
std::vector<double> pit_quantiles(std::span<const double> observed, std::span<const double> levels,
                                  std::span<const double> quantiles);

/// Counts of PIT values in equal-width bins over [0, 1].
struct PitHistogram {
  std::vector<std::size_t> counts;  ///< counts[b] = values in [b/B, (b+1)/B); the last bin includes 1.
  std::size_t missing = 0;          ///< NaN values skipped.
};

/// Histogram of PIT values in `bins` equal bins; NaN values are counted in `missing`.
/// @throws libseq::ConfigError when bins is 0; libseq::DataError when a value is outside [0, 1].
PitHistogram pit_histogram(std::span<const double> pit, std::size_t bins);

/// One row of a reliability table.
struct ReliabilityRow {
  double nominal = std::numeric_limits<double>::quiet_NaN();   ///< The quantile level τ.
  double observed = std::numeric_limits<double>::quiet_NaN();  ///< Fraction of cases with y ≤ q_τ.
  SampleCounts counts;                                         ///< Cases used and skipped at this level.
};

/// Reliability table of quantile sets: for each level, the observed frequency of y ≤ q_τ (nominal vs observed).
std::vector<ReliabilityRow> reliability_table(std::span<const double> observed, std::span<const double> levels,
                                              std::span<const double> quantiles);

}  // namespace libseq::metrics
