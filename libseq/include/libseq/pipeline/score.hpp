#pragma once
/// @file score.hpp
/// Scoring of hindcasts: every metric per site and lead, per site pooled over leads, per lead pooled over sites and
/// pooled over everything, for every method of a results set. The batch job scores with it, and `runnel score`
/// re-scores a results file with other metrics, intervals or a sub-period.

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "libseq/data/periods.hpp"
#include "libseq/io/results.hpp"

namespace libseq::pipeline {

/// What to score.
struct ScoringOptions {
  std::vector<std::string> metrics;       ///< metric names (metrics::parse_metric); empty = every applicable
  std::vector<double> intervals = {0.9};  ///< central interval coverages; their bounds must be stored quantiles
  std::size_t bootstrap_resamples = 0;    ///< moving-block bootstrap intervals of every metric; 0 = none
  std::size_t bootstrap_block = 1;        ///< block length in cases
  std::uint64_t seed = 1;                 ///< seed of the bootstrap
};

/// Metric rows of every method of `results` (interval metrics are suffixed by the coverage, e.g. coverage_90).
/// MASE uses each site's `mase_scale` and is left out of records pooled over sites.
/// @throws libseq::ConfigError naming the metric or interval that cannot be computed from the stored quantiles.
std::vector<io::MetricRow> score_hindcasts(const io::RunResults& results, const ScoringOptions& options);

/// A copy of `results` restricted to the issue times in `period` (when given) and re-scored with `options`.
/// @throws libseq::ConfigError when the period leaves no case, or as score_hindcasts.
io::RunResults rescore(const io::RunResults& results, const std::optional<data::Period>& period,
                       const ScoringOptions& options);

}  // namespace libseq::pipeline
