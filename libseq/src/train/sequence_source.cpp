#include "libseq/train/sequence_source.hpp"

#include <algorithm>
#include <string>

#include "libseq/error.hpp"

namespace libseq::train {

namespace {
void check_size(std::size_t actual, std::size_t expected, const std::string& name, const char* what,
                const char* shape) {
  if (actual != expected) {
    throw DataError(name + ": " + what + " has " + std::to_string(actual) + " values, expected " +
                    std::to_string(expected) + " (" + shape + ")");
  }
}
}  // namespace

template <typename Scalar>
InMemorySequences<Scalar>::InMemorySequences(std::size_t steps, std::size_t input_size, std::size_t horizon,
                                             std::vector<Scalar> inputs, std::vector<Scalar> targets,
                                             std::string_view name)
    : name_(name), steps_(steps), input_size_(input_size), horizon_(horizon), inputs_(std::move(inputs)),
      targets_(std::move(targets)) {
  if (steps_ == 0 || input_size_ == 0 || horizon_ == 0) {
    throw DataError(name_ + ": steps, input_size and horizon must be >= 1 (got " + std::to_string(steps_) + ", " +
                    std::to_string(input_size_) + ", " + std::to_string(horizon_) + ")");
  }
  if (targets_.size() % horizon_ != 0) {
    throw DataError(name_ + ": " + std::to_string(targets_.size()) + " targets is not a multiple of the horizon " +
                    std::to_string(horizon_));
  }
  count_ = targets_.size() / horizon_;
  check_size(inputs_.size(), count_ * steps_ * input_size_, name_, "inputs", "count × steps × input_size");
}

template <typename Scalar>
void InMemorySequences<Scalar>::set_statics(std::size_t static_size, std::vector<Scalar> statics) {
  check_size(statics.size(), count_ * static_size, name_, "statics", "count × static_size");
  static_size_ = static_size;
  statics_ = std::move(statics);
}

template <typename Scalar>
void InMemorySequences<Scalar>::set_mask(std::vector<std::uint8_t> mask) {
  check_size(mask.size(), count_ * steps_, name_, "mask", "count × steps");
  mask_ = std::move(mask);
}

template <typename Scalar>
void InMemorySequences<Scalar>::set_step_targets(std::vector<Scalar> step_targets) {
  check_size(step_targets.size(), count_ * steps_ * horizon_, name_, "step targets", "count × steps × horizon");
  step_targets_ = std::move(step_targets);
}

template <typename Scalar>
void InMemorySequences<Scalar>::fill(std::span<const std::size_t> indices, nn::SequenceBatch<Scalar>& batch) const {
  const std::size_t b_count = indices.size();
  batch.steps = steps_;
  batch.batch = b_count;
  batch.inputs.resize(steps_ * b_count * input_size_);
  batch.statics.resize(b_count * static_size_);
  batch.targets.resize(b_count * horizon_);
  batch.mask.resize(mask_.empty() ? 0 : steps_ * b_count);
  for (std::size_t b = 0; b < b_count; ++b) {
    const std::size_t i = indices[b];
    if (i >= count_) {
      throw DataError(name_ + ": sequence index " + std::to_string(i) + " out of range (" + std::to_string(count_) +
                      " sequences)");
    }
    for (std::size_t t = 0; t < steps_; ++t) {
      std::copy_n(inputs_.begin() + static_cast<std::ptrdiff_t>((i * steps_ + t) * input_size_), input_size_,
                  batch.inputs.begin() + static_cast<std::ptrdiff_t>((t * b_count + b) * input_size_));
      if (!mask_.empty()) batch.mask[t * b_count + b] = mask_[i * steps_ + t];
    }
    std::copy_n(statics_.begin() + static_cast<std::ptrdiff_t>(i * static_size_), static_size_,
                batch.statics.begin() + static_cast<std::ptrdiff_t>(b * static_size_));
    std::copy_n(targets_.begin() + static_cast<std::ptrdiff_t>(i * horizon_), horizon_,
                batch.targets.begin() + static_cast<std::ptrdiff_t>(b * horizon_));
  }
}

template <typename Scalar>
bool InMemorySequences<Scalar>::fill_step_targets(std::span<const std::size_t> indices, std::size_t step,
                                                  std::vector<Scalar>& targets) const {
  if (step_targets_.empty() || step >= steps_) return false;
  targets.resize(indices.size() * horizon_);
  for (std::size_t b = 0; b < indices.size(); ++b) {
    std::copy_n(step_targets_.begin() + static_cast<std::ptrdiff_t>((indices[b] * steps_ + step) * horizon_),
                horizon_, targets.begin() + static_cast<std::ptrdiff_t>(b * horizon_));
  }
  return true;
}

template class InMemorySequences<float>;
template class InMemorySequences<double>;

}  // namespace libseq::train
