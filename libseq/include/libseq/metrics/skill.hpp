#pragma once
/// @file skill.hpp
/// Skill scores: the relative improvement of a score over the same score of a reference forecast (persistence,
/// climatology, seasonal naive, ...).

#include "libseq/metrics/metric_value.hpp"

namespace libseq::metrics {

/// Skill score 1 − S/S_ref for a negatively oriented score whose perfect value is 0 (MSE, RMSE, MAE, CRPS,
/// interval score, pinball loss); 1 = perfect, 0 = no better than the reference, < 0 = worse. It is the general
/// form (S − S_ref)/(S_perfect − S_ref) with S_perfect = 0 (common practice; Murphy 1988 writes the MSE skill score
/// this way, from memory). NaN when S_ref is 0 or either score is NaN. Not meaningful for NSE, KGE or coverage, whose
/// perfect value is not 0.
double skill_score(double score, double reference_score);

/// Skill score of two metric values; the counts are those of `score` (the forecast being judged). Both should be
/// computed on the same cases for the comparison to be fair; this function cannot check that.
MetricValue skill_score(const MetricValue& score, const MetricValue& reference_score);

}  // namespace libseq::metrics
