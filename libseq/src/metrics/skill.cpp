#include "libseq/metrics/skill.hpp"

#include <cmath>
#include <limits>

namespace libseq::metrics {

double skill_score(double score, double reference_score) {
  if (std::isnan(score) || std::isnan(reference_score) || reference_score == 0.0) {
    return std::numeric_limits<double>::quiet_NaN();
  }
  return 1.0 - score / reference_score;
}

MetricValue skill_score(const MetricValue& score, const MetricValue& reference_score) {
  return MetricValue{skill_score(score.value, reference_score.value), score.counts};
}

}  // namespace libseq::metrics
