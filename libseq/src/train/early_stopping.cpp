#include "libseq/train/early_stopping.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::train {

void EarlyStoppingOptions::validate() const {
  std::ostringstream problems;
  if (patience < 1) problems << "\n  early_stopping.patience = " << patience << ": expected an integer >= 1";
  if (!(std::isfinite(min_delta) && min_delta >= 0)) {
    problems << "\n  early_stopping.min_delta = " << min_delta << ": expected a finite value >= 0";
  }
  const std::string text = problems.str();
  if (!text.empty()) throw ConfigError("invalid early-stopping options:" + text);
}

template <typename Scalar>
EarlyStopping<Scalar>::EarlyStopping(const EarlyStoppingOptions& options) : options_(options) {
  options_.validate();
}

template <typename Scalar>
bool EarlyStopping<Scalar>::update(std::size_t epoch, double validation_loss, std::span<const Scalar> parameters) {
  const bool improved = std::isfinite(validation_loss) &&
                        (!has_best_ || validation_loss < best_loss_ - options_.min_delta);
  if (improved) {
    has_best_ = true;
    best_loss_ = validation_loss;
    best_epoch_ = epoch;
    stale_ = 0;
    best_parameters_.assign(parameters.begin(), parameters.end());
    return false;
  }
  ++stale_;
  return options_.enabled && stale_ >= options_.patience;
}

template <typename Scalar>
bool EarlyStopping<Scalar>::restore(std::span<Scalar> parameters) const {
  if (!has_best_) return false;
  if (parameters.size() != best_parameters_.size()) {
    throw DataError("EarlyStopping::restore: expected " + std::to_string(best_parameters_.size()) +
                    " parameters, got " + std::to_string(parameters.size()));
  }
  std::copy(best_parameters_.begin(), best_parameters_.end(), parameters.begin());
  return true;
}

template class EarlyStopping<float>;
template class EarlyStopping<double>;

}  // namespace libseq::train
